import { MessageChannel, receiveMessageOnPort, Worker } from 'node:worker_threads';

/**
 * Synchronous queries to PostgreSQL: the `pg` client runs in a worker thread of its own
 * (pgWorker.mjs) and the calling thread waits for each answer with `Atomics.wait`, then takes it
 * with `receiveMessageOnPort`. So the PostgreSQL store has the same synchronous interface as the
 * SQLite one (src/store/openStore.ts) and the hourly export and dashboard work on both unchanged;
 * the price is that the calling thread waits during each round trip (a batch of 1000 samples is
 * one round trip: see bench/collect.ts).
 *
 * Queries run one at a time on one connection, so `query('BEGIN')` … `query('COMMIT')` is a
 * transaction.
 */
export interface SyncPg {
  query<T = Record<string, unknown>>(sql: string, params?: readonly unknown[]): { rows: T[]; rowCount: number };
  close(): void;
}

export class PgError extends Error {
  readonly code: string | undefined;
  constructor(message: string, code: string | undefined) {
    super(message);
    this.name = 'PgError';
    this.code = code;
  }
}

/** Starts the connection thread (connecting on the first query); `timeoutMs` bounds each query (default 60 s). */
export function syncPg(url: string, options: { timeoutMs?: number } = {}): SyncPg {
  const { timeoutMs = 60_000 } = options;
  const { port1, port2 } = new MessageChannel();
  const flag = new SharedArrayBuffer(4);
  const signal = new Int32Array(flag);
  const worker = new Worker(new URL('./pgWorker.mjs', import.meta.url), { workerData: { url, port: port2, flag }, transferList: [port2] });
  worker.unref();
  let closed = false;

  function call(message: unknown): { ok: boolean; rows?: unknown[]; rowCount?: number; message?: string; code?: string } {
    if (closed) throw new Error('postgres: the store is closed');
    Atomics.store(signal, 0, 0);
    port1.postMessage(message);
    const waited = Atomics.wait(signal, 0, 0, timeoutMs);
    const reply = receiveMessageOnPort(port1);
    if (reply === undefined) throw new Error(waited === 'timed-out' ? `postgres: no answer within ${timeoutMs} ms` : 'postgres: the connection thread stopped');
    return reply.message as { ok: boolean; rows?: unknown[]; rowCount?: number; message?: string; code?: string };
  }

  return {
    query<T>(sql: string, params: readonly unknown[] = []) {
      const reply = call({ type: 'query', sql, params });
      if (!reply.ok) throw new PgError(`postgres: ${reply.message ?? 'query failed'}`, reply.code);
      return { rows: (reply.rows ?? []) as T[], rowCount: reply.rowCount ?? 0 };
    },
    close() {
      if (closed) return;
      try {
        call({ type: 'close' });
      } finally {
        closed = true;
        port1.close();
        void worker.terminate();
      }
    },
  };
}
