import pg from 'pg';
import { listening } from '../../outputs/mqtt/realBroker.ts';

/** The PostgreSQL of the development and CI machines (trust authentication). */
export const PG_HOST = { host: '127.0.0.1', port: 5432 } as const;
export const pgAvailable = await listening(PG_HOST.host, PG_HOST.port);
if (!pgAvailable) console.warn('postgres tests: no PostgreSQL at 127.0.0.1:5432, skipping (start it: pg_ctlcluster --skip-systemctl-redirect $(ls /etc/postgresql) main start)');

const ADMIN_URL = `postgres://postgres@${PG_HOST.host}:${PG_HOST.port}/postgres`;

/** Creates a database of our own (residuum_test_<pid>_<random>); `drop()` removes it, closing what is still connected. */
export async function testDatabase(): Promise<{ url: string; name: string; drop(): Promise<void> }> {
  const name = `residuum_test_${process.pid}_${Math.random().toString(16).slice(2, 10)}`;
  const admin = new pg.Client({ connectionString: ADMIN_URL });
  await admin.connect();
  try {
    await admin.query(`CREATE DATABASE ${name}`);
  } finally {
    await admin.end();
  }
  return {
    name,
    url: `postgres://postgres@${PG_HOST.host}:${PG_HOST.port}/${name}`,
    async drop() {
      const c = new pg.Client({ connectionString: ADMIN_URL });
      await c.connect();
      try {
        await c.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
      } finally {
        await c.end();
      }
    },
  };
}
