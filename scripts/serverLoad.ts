// `npm run load`: how the service's HTTP side holds up against greedy clients, measured against
// the real service (`residuum run` in a child process, its camera thread counting the synthetic
// reading room) on a database with a year of data. About two minutes; loopback only.
//   1. /api/live response times with nothing else going on (the baseline);
//   2. 6 live streams without a key from one address, 40 more each from its own loopback address
//      (127.0.0.2…), then one with the admin key: does the dashboard still stream, and what do
//      the others get;
//   3. four 400-day exports at once while /api/live is asked every 50 ms: its response times;
//      the same with the admin key (not limited), and a ten-year export (refused).
// Prints one line per figure. A year of data: one sample per zone every 15 minutes for 365 days
// (the history reads quarter-hour rollups, so this is the read load of a year of 10 s samples).
import { spawn } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { request, type IncomingMessage } from 'node:http';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { stringify } from 'yaml';
import { NEW_KEYS_FILE } from '../src/commands/run.ts';
import type { Zone } from '../src/domain/zone.ts';
import { openStore, type Sample } from '../src/store/index.ts';

const root = fileURLToPath(new URL('../', import.meta.url));
const zones: Zone[] = [
  { id: 'entrance', name: 'Entrance', kind: 'room', capacity: 4, polygon: [[0.04, 0.6], [0.3, 0.6], [0.3, 0.98], [0.04, 0.98]], personArea: 0.0053, minBlobArea: 0.0013 },
  { id: 'stacks', name: 'Stacks aisle', kind: 'room', capacity: 6, polygon: [[0.04, 0.36], [0.96, 0.36], [0.96, 0.52], [0.04, 0.52]], personArea: 0.0053, minBlobArea: 0.0013 },
  { id: 'tables', name: 'Reading tables', kind: 'room', capacity: 10, polygon: [[0.34, 0.54], [0.97, 0.54], [0.97, 0.98], [0.34, 0.98]], personArea: 0.0042, minBlobArea: 0.001 },
];

const dir = mkdtempSync(join(tmpdir(), 'residuum-load-'));
const data = join(dir, 'data');
const configFile = join(dir, 'site.yaml');
writeFileSync(
  configFile,
  stringify({
    site: { name: 'Load test', timeZone: 'Europe/Berlin' },
    storage: { sampleRetentionDays: 400 },
    server: { host: '127.0.0.1', port: 0 },
    cameras: [{ id: 'reading-room', source: { kind: 'synthetic', scene: 'reading-room', speed: 1 }, size: [320, 240], sampleSeconds: 10, zones }],
  }),
);

// A year of data, ending now.
{
  const store = openStore(join(data, 'residuum.db'), { timeZone: 'Europe/Berlin' });
  const quarter = 900_000;
  const end = Math.floor(Date.now() / quarter) * quarter - quarter;
  const start = end - 365 * 86_400_000;
  store.upsertCamera({ id: 'reading-room', name: 'reading-room' }, { time: start - quarter });
  for (const z of zones) store.upsertZone('reading-room', z, { time: start - quarter });
  let batch: Sample[] = [];
  for (let t = start + quarter; t <= end; t += quarter) {
    for (const [i, z] of zones.entries()) batch.push({ time: t, camera: 'reading-room', zone: z.id, kind: 'count', value: (Math.floor(t / quarter) + i) % 5, intervalMs: quarter });
    if (batch.length >= 3000) {
      store.insertSamples(batch);
      batch = [];
    }
  }
  if (batch.length > 0) store.insertSamples(batch);
  const { n } = store.db.prepare('SELECT count(*) AS n FROM rollups').get() as { n: number };
  console.log(`database: ${n} quarter-hour rollups over 365 days, 3 zones`);
  store.close();
}

const child = spawn(process.execPath, [join(root, 'bin/residuum.js'), 'run', '--config', configFile, '--data', data], { stdio: ['ignore', 'pipe', 'inherit'] });
let out = '';
child.stdout.setEncoding('utf8');
const port = await new Promise<number>((done, fail) => {
  child.stdout.on('data', (chunk: string) => {
    out += chunk;
    const m = /serving the API at http:\/\/127\.0\.0\.1:(\d+)\//.exec(out);
    if (m) done(Number(m[1]));
  });
  child.once('exit', () => fail(new Error(`the service exited:\n${out}`)));
});
const key = /^ {2}([A-Za-z0-9_-]{43})$/m.exec(readFileSync(join(data, NEW_KEYS_FILE), 'utf8'))![1];
const base = `http://127.0.0.1:${port}`;
const admin = { Authorization: `Bearer ${key}` };

/** Milliseconds of one GET /api/live (to the end of the body). */
async function liveTime(): Promise<number> {
  const t0 = performance.now();
  const res = await fetch(`${base}/api/live`);
  await res.arrayBuffer();
  return performance.now() - t0;
}
const quantile = (xs: number[], q: number) => [...xs].sort((a, b) => a - b)[Math.min(xs.length - 1, Math.floor(q * xs.length))];
const summary = (xs: number[]) => `median ${quantile(xs, 0.5).toFixed(1)} ms, 95th percentile ${quantile(xs, 0.95).toFixed(1)} ms, max ${Math.max(...xs).toFixed(1)} ms (${xs.length} requests)`;
const sleep = (ms: number) => new Promise((done) => setTimeout(done, ms));

/** Polls /api/live every 50 ms until `until` settles; returns the response times. */
async function pollLive(until: Promise<unknown>): Promise<number[]> {
  let over = false;
  void until.finally(() => (over = true));
  const times: number[] = [];
  while (!over) {
    times.push(await liveTime());
    await sleep(50);
  }
  return times;
}

// 1. Baseline.
await sleep(3000);
const baseline: number[] = [];
for (let i = 0; i < 100; i++) {
  baseline.push(await liveTime());
  await sleep(50);
}
console.log(`/api/live alone: ${summary(baseline)}`);

// 2. Streams.
function openStream(from: string, headers: Record<string, string> = {}): Promise<{ status: number; res: IncomingMessage; firstEventMs?: number }> {
  const t0 = performance.now();
  return new Promise((done, fail) => {
    const req = request({ host: '127.0.0.1', port, path: '/api/live/stream', localAddress: from, headers }, (res) => {
      if (res.statusCode !== 200) {
        res.resume();
        done({ status: res.statusCode!, res });
        return;
      }
      let text = '';
      res.setEncoding('utf8');
      res.on('data', (chunk: string) => {
        text += chunk;
        if (text.includes('event: live')) done({ status: 200, res, firstEventMs: performance.now() - t0 });
      });
    });
    req.on('error', fail);
    req.end();
  });
}
const tally = (list: { status: number }[]) => {
  const counts = new Map<number, number>();
  for (const s of list) counts.set(s.status, (counts.get(s.status) ?? 0) + 1);
  return [...counts].map(([status, n]) => `${n} × ${status}`).join(', ');
};
const fromOne: Awaited<ReturnType<typeof openStream>>[] = [];
for (let i = 0; i < 6; i++) fromOne.push(await openStream('127.0.0.1'));
console.log(`6 streams without a key from one address: ${tally(fromOne)}`);
const anonymous = await Promise.all(Array.from({ length: 40 }, (_, i) => openStream(`127.0.0.${i + 2}`)));
console.log(`then 40 without a key, one per address: ${tally(anonymous)}`);
const dashboard = await openStream('127.0.0.1', admin);
console.log(`then the dashboard with the admin key: ${dashboard.status}, first event after ${dashboard.firstEventMs?.toFixed(1)} ms`);
console.log(`/api/live with ${[...fromOne, ...anonymous].filter((s) => s.status === 200).length + 1} streams open: ${summary(await pollLive(sleep(5000)))}`);
for (const s of [...anonymous, ...fromOne, dashboard]) s.res.destroy();
await sleep(500);

// 3. Long exports.
async function exportYear(from: string, headers: Record<string, string> = {}): Promise<{ status: number; bytes: number; ms: number }> {
  const t0 = performance.now();
  const to = new Date().toISOString().slice(0, 10);
  const start = new Date(Date.now() - 399 * 86_400_000).toISOString().slice(0, 10);
  return new Promise((done, fail) => {
    const req = request({ host: '127.0.0.1', port, path: `/api/export/hourly.csv?from=${start}&to=${to}`, localAddress: from, headers }, (res) => {
      let bytes = 0;
      res.on('data', (chunk: Buffer) => (bytes += chunk.length));
      res.on('end', () => done({ status: res.statusCode!, bytes, ms: performance.now() - t0 }));
    });
    req.on('error', fail);
    req.end();
  });
}
for (const [label, headers] of [['without a key', {}], ['with the admin key', admin]] as const) {
  const exports = Promise.all([2, 3, 4, 5].map((i) => exportYear(`127.0.0.${i}`, headers)));
  const times = await pollLive(exports);
  const results = await exports;
  console.log(`four 400-day exports at once ${label}: ${results.map((r) => `${r.status} (${(r.bytes / 1e6).toFixed(2)} MB in ${(r.ms / 1000).toFixed(1)} s)`).join(', ')}`);
  console.log(`  /api/live meanwhile: ${summary(times)}`);
  await sleep(500);
}
const tenYears = await fetch(`${base}/api/export/hourly.csv?from=2016-01-01&to=2025-12-31`);
console.log(`a ten-year export: ${tenYears.status} ${JSON.stringify(await tenYears.json())}`);

child.kill('SIGTERM');
await new Promise((done) => child.once('exit', done));
rmSync(dir, { recursive: true, force: true });
