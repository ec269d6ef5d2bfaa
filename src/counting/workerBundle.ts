import { createHash, randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { extname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

/**
 * Worker threads that load one prebuilt JavaScript file each instead of registering the TypeScript
 * loader: with the loader, every worker started a hooks thread of its own and compiled the whole
 * module graph again with inline source maps, some 40 MB resident per camera (DEVELOPERS.md).
 *
 * A bundle is every entry with the project modules it imports, as ES modules (esbuild); packages
 * stay outside (imported from node_modules as usual, native ones must). Each project module's
 * `import.meta.url` (and `import.meta.filename`, `import.meta.dirname`) is replaced by its source
 * file's, so `new URL('./kernels/counting.wasm', import.meta.url)`, package.json and web paths
 * resolve as they do from the sources. A bundle sits in `<cacheDir>/<hash>/`, the hash taken over
 * the bundled sources (paths and contents) and this file, and `<cacheDir>/manifest.json` lists them:
 * a bundle is fresh while the files it lists hash to the same value, so one built from older
 * sources is never used (the worker falls back to the loader instead).
 */
export interface WorkerBundleOptions {
  /** Entry modules by bundle name (`cameraWorker` → `cameraWorker.mjs`): absolute paths of the sources. */
  readonly entries: Readonly<Record<string, string>>;
  /** Where bundles are kept: inside the project (node_modules/.cache/…), so that their package imports resolve. */
  readonly cacheDir: string;
}

interface Manifest {
  readonly format: number;
  readonly hash: string;
  readonly entries: Readonly<Record<string, string>>;
  /** Absolute paths of every source bundled, in the order hashed. */
  readonly inputs: readonly string[];
}

/** Bumped when the way bundles are built changes in a way the hash of this file would not show. */
const FORMAT = 1;
/** Bundles kept besides the newest (others may still run them; older ones are deleted). */
const KEEP_OLDER = 2;

/**
 * The directory of a bundle of `entries` built from the sources as they are on disk now, or
 * undefined when there is none (never built, a source changed, moved or went missing). Reads and
 * hashes the bundled sources (some 100 files: a few milliseconds); writes nothing.
 */
export function freshWorkerBundle(options: WorkerBundleOptions): string | undefined {
  const { entries, cacheDir } = options;
  let manifest: Manifest;
  try {
    manifest = JSON.parse(readFileSync(join(cacheDir, 'manifest.json'), 'utf8')) as Manifest;
  } catch {
    return undefined;
  }
  if (manifest.format !== FORMAT || !sameEntries(manifest.entries, entries) || !Array.isArray(manifest.inputs)) return undefined;
  const contents = new Map<string, Buffer>();
  for (const input of manifest.inputs) {
    try {
      contents.set(input, readFileSync(input));
    } catch {
      return undefined;
    }
  }
  const hash = bundleHash(entries, contents);
  if (hash !== manifest.hash) return undefined;
  const dir = join(cacheDir, hash);
  return Object.keys(entries).every((name) => existsSync(join(dir, `${name}.mjs`))) ? dir : undefined;
}

/**
 * Builds the bundle of `entries` (esbuild, some 100 ms) into `<cacheDir>/<hash>/` and makes it the
 * fresh one; returns its directory. Safe to run from several processes at once: each builds into a
 * directory of its own and renames it into place. Throws when the cache directory cannot be
 * written (a read-only install) or a source does not compile.
 */
export async function buildWorkerBundle(options: WorkerBundleOptions): Promise<string> {
  const { entries, cacheDir } = options;
  // Imported here, never at the top: this module is bundled into the workers, which must not load esbuild.
  const esbuild = await import('esbuild');
  mkdirSync(cacheDir, { recursive: true });
  const building = join(cacheDir, `.building-${process.pid}-${randomBytes(4).toString('hex')}`);
  /** What was bundled, exactly as read. */
  const contents = new Map<string, Buffer>();
  try {
    await esbuild.build({
      entryPoints: Object.fromEntries(Object.entries(entries)),
      outdir: building,
      outExtension: { '.js': '.mjs' },
      bundle: true,
      platform: 'node',
      format: 'esm',
      target: 'node20',
      packages: 'external',
      logLevel: 'silent',
      // How code in a bundle knows it runs from one, and where (startWorker.ts); not rewritten by the plugin.
      banner: { js: 'const __workerBundleUrl = import.meta.url;' },
      plugins: [
        {
          name: 'source-locations',
          setup(build) {
            build.onLoad({ filter: /\.(ts|mts|js|mjs|json)$/ }, (args) => {
              const bytes = readFileSync(args.path);
              contents.set(args.path, bytes);
              const extension = extname(args.path);
              return {
                contents: extension === '.json' ? bytes.toString('utf8') : withSourceLocation(bytes.toString('utf8'), args.path),
                loader: extension === '.json' ? 'json' : extension === '.ts' || extension === '.mts' ? 'ts' : 'js',
              };
            });
          },
        },
      ],
    });
    const hash = bundleHash(entries, contents);
    const dir = join(cacheDir, hash);
    try {
      renameSync(building, dir);
    } catch (error) {
      // Another process built the same sources first: theirs is the same bundle.
      if (!Object.keys(entries).every((name) => existsSync(join(dir, `${name}.mjs`)))) throw error;
    }
    const manifest: Manifest = { format: FORMAT, hash, entries, inputs: [...contents.keys()] };
    const temporary = join(cacheDir, `.manifest-${process.pid}-${randomBytes(4).toString('hex')}.json`);
    writeFileSync(temporary, `${JSON.stringify(manifest, null, 2)}\n`);
    renameSync(temporary, join(cacheDir, 'manifest.json'));
    try {
      deleteOlderBundles(cacheDir, hash);
    } catch {
      // Tidying up is not worth failing a build for.
    }
    return dir;
  } finally {
    rmSync(building, { recursive: true, force: true });
  }
}

/**
 * The source with its own location in place of `import.meta.url`, `import.meta.filename` and
 * `import.meta.dirname`, which in a bundle would name the bundle. Textual: an occurrence in a
 * comment or string is replaced too, harmlessly.
 */
function withSourceLocation(source: string, path: string): string {
  const url = pathToFileURL(path).href;
  return source
    .replace(/\bimport\.meta\.url\b/g, JSON.stringify(url))
    .replace(/\bimport\.meta\.filename\b/g, JSON.stringify(path))
    .replace(/\bimport\.meta\.dirname\b/g, JSON.stringify(fileURLToPath(new URL('.', url)).replace(/\/$/, '')));
}

/** SHA-256 over the format, this file, the entries and every bundled source (path and bytes). */
function bundleHash(entries: Readonly<Record<string, string>>, contents: ReadonlyMap<string, Buffer>): string {
  const hash = createHash('sha256');
  hash.update(`residuum worker bundle ${FORMAT}\0`);
  hash.update(readFileSync(fileURLToPath(import.meta.url)));
  for (const name of Object.keys(entries).sort()) hash.update(`\0entry ${name} ${entries[name]}`);
  for (const path of [...contents.keys()].sort()) {
    const bytes = contents.get(path)!;
    hash.update(`\0file ${path} ${bytes.length}\0`);
    hash.update(bytes);
  }
  return hash.digest('hex').slice(0, 32);
}

function sameEntries(a: unknown, b: Readonly<Record<string, string>>): boolean {
  if (typeof a !== 'object' || a === null) return false;
  const keys = Object.keys(b);
  return Object.keys(a).length === keys.length && keys.every((k) => (a as Record<string, unknown>)[k] === b[k]);
}

/** Removes bundles but the newest `KEEP_OLDER` besides `current`, and builds left behind by a crash a day ago. */
function deleteOlderBundles(cacheDir: string, current: string): void {
  const mtime = (name: string) => {
    try {
      return statSync(join(cacheDir, name)).mtimeMs;
    } catch {
      return Infinity; // gone already (another process tidied up)
    }
  };
  const dirs = readdirSync(cacheDir, { withFileTypes: true })
    .filter((e) => e.isDirectory() && e.name !== current)
    .map((e) => ({ name: e.name, mtime: mtime(e.name) }))
    .sort((a, b) => b.mtime - a.mtime);
  const dayAgo = Date.now() - 24 * 3600_000;
  const bundles = dirs.filter((d) => !d.name.startsWith('.'));
  const leftBuilds = dirs.filter((d) => d.name.startsWith('.') && d.mtime < dayAgo);
  for (const { name } of [...bundles.slice(KEEP_OLDER), ...leftBuilds]) rmSync(join(cacheDir, name), { recursive: true, force: true });
}
