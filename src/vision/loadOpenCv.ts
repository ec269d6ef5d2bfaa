/**
 * Loads opencv.js (`@techstark/opencv-js`), a general-purpose reference library: tests check our
 * stages against it, and `residuum evaluate --method mog2` and the benchmark run its
 * BackgroundSubtractorMOG2 as a baseline. Nothing in the counting path depends on it.
 *
 *     import { loadOpenCv } from '../helpers/opencv.ts';
 *     let cv: any;
 *     beforeAll(async () => { cv = await loadOpenCv(); });
 *
 * What it handles, so that tests need not:
 * - The package is a UMD wrapper around an Emscripten module (WebAssembly inlined), so it is
 *   loaded with Node's own `require` (via `createRequire`), not through Vite's transform.
 * - The runtime initialises asynchronously. Depending on the build, the export is a Promise of
 *   the module, or the module itself, which signals readiness through `onRuntimeInitialized`
 *   and/or an Emscripten-style `then(callback)`. All of these are awaited here; the module is
 *   ready when `cv.Mat` exists.
 * - That Emscripten `then` calls back with the module itself, so awaiting the module (or
 *   resolving a promise with it) would loop for ever. The helper deletes `cv.then` once the
 *   runtime is ready, so the value returned can be awaited and passed around freely.
 * - At load time the Emscripten runtime installs process-wide `uncaughtException` and
 *   `unhandledRejection` listeners (the latter aborts the runtime) and sets a global `Module`.
 *   The helper removes those listeners and that global again, leaving the test runner's
 *   error reporting alone.
 * - The module is loaded once per test process (vitest runs each test file in its own worker),
 *   and every call returns the same instance. A failed load is not cached, so a later call
 *   retries. Loading takes a few hundred milliseconds; call it in `beforeAll`.
 *
 * Memory: every `cv.Mat` (and `cv.MatVector` etc.) lives on the WebAssembly heap and is not
 * garbage-collected; tests must call `.delete()` on each one they create, in a `finally`.
 */
import { createRequire } from 'node:module';

/** The opencv.js module; untyped, as the package's typings do not cover the runtime object. */
type OpenCv = any;

const require = createRequire(import.meta.url);

/** Milliseconds to wait for the runtime to initialise before failing. */
const INIT_TIMEOUT_MS = 60_000;

let loading: Promise<OpenCv> | undefined;

/** Resolves to the initialised opencv.js module, loading it on the first call. */
export async function loadOpenCv(): Promise<OpenCv> {
  if (loading === undefined) {
    loading = load();
    loading.catch(() => {
      loading = undefined;
    });
  }
  return loading;
}

async function load(): Promise<OpenCv> {
  const hadGlobalModule = Object.prototype.hasOwnProperty.call(globalThis, 'Module');
  const uncaught = process.listeners('uncaughtException');
  const rejection = process.listeners('unhandledRejection');
  let exported: unknown;
  try {
    exported = require('@techstark/opencv-js');
  } finally {
    for (const l of process.listeners('uncaughtException')) {
      if (!uncaught.includes(l)) process.removeListener('uncaughtException', l);
    }
    for (const l of process.listeners('unhandledRejection')) {
      if (!rejection.includes(l)) process.removeListener('unhandledRejection', l);
    }
    if (!hadGlobalModule) delete (globalThis as { Module?: unknown }).Module;
  }
  return whenReady(exported);
}

/** Waits until `m` (a real Promise, or an Emscripten module not yet initialised) is a ready module. */
async function whenReady(m: unknown): Promise<OpenCv> {
  // A genuine Promise (newer builds): its resolution value is the module, which may itself still
  // be initialising. Unwrap it without letting `await` see a module's own `then`.
  if (m instanceof Promise) {
    const { value } = await m.then((v: unknown) => ({ value: v }));
    return whenReady(value);
  }
  if (m === null || (typeof m !== 'object' && typeof m !== 'function')) {
    throw new TypeError(`@techstark/opencv-js exported ${m === null ? 'null' : typeof m}, expected the opencv.js module`);
  }
  const cv = m as OpenCv;
  if (!isReady(cv)) await initialised(cv);
  if (typeof cv.then === 'function') delete cv.then;
  if (!isReady(cv)) throw new Error('opencv.js runtime reported ready but cv.Mat is missing');
  return cv;
}

function isReady(cv: OpenCv): boolean {
  return typeof cv.Mat === 'function' && cv.calledRun !== false;
}

/** Resolves (with nothing, on purpose: the module is thenable) once the Emscripten runtime has run. */
function initialised(cv: OpenCv): Promise<void> {
  return new Promise<void>((resolve, reject) => {
    let settled = false;
    const timer = setTimeout(() => {
      settle(new Error(`opencv.js runtime did not initialise within ${INIT_TIMEOUT_MS} ms`));
    }, INIT_TIMEOUT_MS);
    timer.unref?.();
    function settle(error?: Error): void {
      if (settled) return;
      settled = true;
      clearTimeout(timer);
      if (error) reject(error);
      else resolve();
    }
    const previous = cv.onRuntimeInitialized;
    cv.onRuntimeInitialized = () => {
      if (typeof previous === 'function') previous();
      settle();
    };
    const previousAbort = cv.onAbort;
    cv.onAbort = (what: unknown) => {
      if (typeof previousAbort === 'function') previousAbort(what);
      settle(new Error(`opencv.js runtime aborted: ${String(what)}`));
    };
    // The runtime may have finished between the check and setting the hook above.
    if (isReady(cv)) settle();
  });
}
