// Worker entry when running from TypeScript sources without esbuild: load tsx, then the
// entry module the pool names in workerData.
import { workerData } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
await import(workerData.entry);
