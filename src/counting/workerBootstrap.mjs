// Entry of Residuum's worker threads: registers the TypeScript loader (as bin/residuum.js does
// for the main thread), then runs the worker module named in workerData.module.
import { workerData } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
await import(workerData.module);
