// `npm run build:workers`: builds the worker bundle (src/counting/workerBundle.ts) ahead of time,
// for installs the service cannot write to when it starts (deploy/Containerfile, a root-owned
// /opt/residuum): without it their workers load the TypeScript sources through tsx, some 40 MB
// more per camera. The service builds it itself when it can.
import { prepareWorkers } from '../src/counting/startWorker.ts';

const loading = await prepareWorkers();
if ('loader' in loading) {
  process.stderr.write(`${loading.loader}\n`);
  process.exitCode = 1;
} else {
  process.stdout.write(`worker bundle in ${loading.bundle}\n`);
}
