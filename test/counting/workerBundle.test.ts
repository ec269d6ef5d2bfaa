import { chmodSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import { afterAll, describe, expect, it } from 'vitest';
import { buildWorkerBundle, freshWorkerBundle, type WorkerBundleOptions } from '../../src/counting/workerBundle.ts';

// A two-module TypeScript worker of our own in a temporary folder: the entry imports a helper that
// reads a file beside it through `new URL(…, import.meta.url)`, as the vision kernels read their .wasm.

const dir = mkdtempSync(join(tmpdir(), 'residuum-bundle-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function project(name: string): WorkerBundleOptions {
  const src = join(dir, name, 'src');
  const nested = join(src, 'nested');
  mkdirSync(nested, { recursive: true });
  writeFileSync(join(nested, 'table.txt'), 'from the table beside the helper');
  writeFileSync(
    join(nested, 'helper.ts'),
    "import { readFileSync } from 'node:fs';\nexport const version: number = 1;\nexport const table = (): string => readFileSync(new URL('./table.txt', import.meta.url), 'utf8');\n",
  );
  writeFileSync(
    join(src, 'entry.ts'),
    "import { parentPort } from 'node:worker_threads';\nimport { table, version } from './nested/helper.ts';\nconst answer: { version: number; table: string } = { version, table: table() };\nparentPort!.postMessage(answer);\n",
  );
  return { entries: { entry: join(src, 'entry.ts') }, cacheDir: join(dir, name, 'cache') };
}

/** Runs `<bundle>/entry.mjs` in a plain worker thread (no TypeScript loader) and returns its message. */
function runBundle(bundle: string): Promise<{ version: number; table: string }> {
  return new Promise((resolve, reject) => {
    const worker = new Worker(pathToFileURL(join(bundle, 'entry.mjs')));
    worker.once('message', (message) => {
      resolve(message as { version: number; table: string });
      void worker.terminate();
    });
    worker.once('error', reject);
  });
}

describe('worker bundles', () => {
  it('builds one that runs without the TypeScript loader and reads files beside its sources', async () => {
    const options = project('runs');
    expect(freshWorkerBundle(options)).toBeUndefined();
    const bundle = await buildWorkerBundle(options);
    expect(freshWorkerBundle(options)).toBe(bundle);
    expect(await runBundle(bundle)).toEqual({ version: 1, table: 'from the table beside the helper' });
    // One file, no imports of the sources left in it.
    expect(readFileSync(join(bundle, 'entry.mjs'), 'utf8')).not.toMatch(/from ["'][^"']*\.ts["']/);
  });

  it('never hands out a bundle older than a source: a changed source makes it stale until rebuilt', async () => {
    const options = project('stale');
    const first = await buildWorkerBundle(options);
    const helper = join(dir, 'stale', 'src', 'nested', 'helper.ts');
    writeFileSync(helper, readFileSync(helper, 'utf8').replace('version: number = 1', 'version: number = 2'));
    expect(freshWorkerBundle(options)).toBeUndefined();
    const second = await buildWorkerBundle(options);
    expect(second).not.toBe(first);
    expect(freshWorkerBundle(options)).toBe(second);
    expect((await runBundle(second)).version).toBe(2);
    // A source that went missing makes it stale too.
    rmSync(helper);
    expect(freshWorkerBundle(options)).toBeUndefined();
  });

  it('builds the same bundle when several builds race', async () => {
    const options = project('race');
    const dirs = await Promise.all([buildWorkerBundle(options), buildWorkerBundle(options), buildWorkerBundle(options)]);
    expect(new Set(dirs).size).toBe(1);
    expect(freshWorkerBundle(options)).toBe(dirs[0]);
    expect((await runBundle(dirs[0])).version).toBe(1);
  });

  it('fails to build where the cache cannot be written, naming the place', async () => {
    const options = project('readonly');
    const blocked = join(dir, 'readonly', 'a-file');
    writeFileSync(blocked, 'not a folder');
    chmodSync(blocked, 0o444);
    await expect(buildWorkerBundle({ ...options, cacheDir: join(blocked, 'cache') })).rejects.toThrow(/a-file/);
  });
});
