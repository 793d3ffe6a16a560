// Worker entry of the pool (core/parallel): serves every kernel listed in kernels.ts.
// Bundled builds ship it as pool-worker.js beside the bundle (app/build.ts, bin/cli-bundle.mjs).
import { serveKernels } from './parallel/serve.ts';
import { KERNELS } from './kernels.ts';

serveKernels(KERNELS);
