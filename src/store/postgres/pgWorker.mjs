// The thread that talks to PostgreSQL for syncPg.ts: one connection (pg), requests one at a time.
// Each answer is posted on the port, then the flag is set and the waiting thread woken.
import { workerData } from 'node:worker_threads';
import pg from 'pg';

const { url, port, flag } = workerData;
const signal = new Int32Array(flag);
// bigint columns (int8) come back as text by default; every value we store fits in 2^53.
pg.types.setTypeParser(20, (text) => Number(text));
const client = new pg.Client({ connectionString: url, application_name: 'residuum' });
let ready;

function answer(message) {
  port.postMessage(message);
  Atomics.store(signal, 0, 1);
  Atomics.notify(signal, 0);
}

port.on('message', async (request) => {
  try {
    if (request.type === 'close') {
      await client.end().catch(() => {});
      answer({ ok: true });
      port.close();
      return;
    }
    ready ??= client.connect();
    await ready;
    const result = await client.query({ text: request.sql, values: request.params ?? [], rowMode: undefined });
    answer({ ok: true, rows: result.rows, rowCount: result.rowCount });
  } catch (error) {
    answer({ ok: false, message: error.message, code: error.code });
  }
});
client.on('error', () => {
  // A dropped connection fails the next query with its reason; nothing to do here.
});
