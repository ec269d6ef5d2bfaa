import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { Worker, type WorkerOptions } from 'node:worker_threads';
import { buildWorkerBundle, freshWorkerBundle, type WorkerBundleOptions } from './workerBundle.ts';

/** The modules of src/counting that run as worker threads. */
export type WorkerName = 'cameraWorker' | 'learnWorker';

/** How this process starts its workers: from the bundle in `dir`, or through the TypeScript loader and why. */
export type WorkerLoading = { readonly bundle: string } | { readonly loader: string };

/**
 * The URL of the bundle this code runs from, when it runs from one: buildWorkerBundle's banner
 * declares it at the top of every bundle; from the sources it is not declared at all.
 */
declare const __workerBundleUrl: string | undefined;

/** The project's worker bundle: both workers, kept in node_modules/.cache so that their package imports resolve. */
const BUNDLE: WorkerBundleOptions = {
  entries: {
    cameraWorker: fileURLToPath(new URL('./cameraWorker.ts', import.meta.url)),
    learnWorker: fileURLToPath(new URL('./learnWorker.ts', import.meta.url)),
  },
  cacheDir: fileURLToPath(new URL('../../node_modules/.cache/residuum-workers/', import.meta.url)),
};

let loading: WorkerLoading | undefined;
let preparing: Promise<WorkerLoading> | undefined;

/**
 * Makes sure the workers of this process load the bundle of the sources as they are now: builds it
 * when there is none or it is older than a source (see workerBundle.ts). Resolves with how the
 * workers will load — through the TypeScript loader (some 40 MB more per camera) when the bundle
 * cannot be built, e.g. in a read-only install where nobody ran `npm run build:workers`. Once per
 * process; the workers it starts later keep the bundle decided here, matching the code the main
 * thread loaded.
 */
export function prepareWorkers(): Promise<WorkerLoading> {
  if (typeof __workerBundleUrl === 'string') return Promise.resolve({ bundle: fileURLToPath(new URL('.', __workerBundleUrl)) });
  preparing ??= (async () => {
    const fresh = freshWorkerBundle(BUNDLE);
    if (fresh !== undefined) return (loading = { bundle: fresh });
    try {
      return (loading = { bundle: await buildWorkerBundle(BUNDLE) });
    } catch (error) {
      return (loading = { loader: `the worker bundle could not be built in ${BUNDLE.cacheDir}: ${(error as Error).message}` });
    }
  })();
  return preparing;
}

/**
 * Starts `name` as a worker thread: from the fresh bundle (prepareWorkers, or one found on disk),
 * else from its TypeScript source through workerBootstrap.mjs, which registers the loader. Never
 * from a bundle built from other sources.
 */
export function startWorker(name: WorkerName, options: WorkerOptions = {}): Worker {
  // In a bundle, the other worker is beside this one: built from the same sources at the same time.
  if (typeof __workerBundleUrl === 'string') return new Worker(new URL(`./${name}.mjs`, __workerBundleUrl), options);
  const bundle = bundleDir(name);
  if (bundle !== undefined) return new Worker(pathToFileURL(join(bundle, `${name}.mjs`)), options);
  return new Worker(new URL('./workerBootstrap.mjs', import.meta.url), {
    ...options,
    workerData: { ...(options.workerData as object), module: new URL(`./${name}.ts`, import.meta.url).href },
  });
}

/** The fresh bundle's directory, if there is one with `name` in it; looked up on disk once when prepareWorkers was not called. */
function bundleDir(name: WorkerName): string | undefined {
  if (loading === undefined || ('bundle' in loading && !existsSync(join(loading.bundle, `${name}.mjs`)))) {
    const fresh = freshWorkerBundle(BUNDLE);
    loading = fresh !== undefined ? { bundle: fresh } : { loader: 'no bundle of the current sources (prepareWorkers was not called)' };
  }
  return 'bundle' in loading ? loading.bundle : undefined;
}
