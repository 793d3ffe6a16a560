/**
 * Every kernel the worker pool can run: each step's module defines its own (defineKernel in
 * core/parallel/kernel.ts) and it is listed here, so the worker entry (pool-worker.ts) bundles
 * them all. A kernel missing from this list runs with `workers: 0` but fails in a worker.
 */
import type { AnyKernel } from './parallel/kernel.ts';
import { WorkerPool } from './parallel/pool.ts';
import { skyMeshRowsKernel, subtractSkyRowsKernel } from './image/background.ts';
import { convolveRowsKernel } from './image/convolve.ts';
import { localMaximaRowsKernel } from './stars/detect.ts';
import { measureBatchKernel } from './stars/measure-batch.ts';

export const KERNELS: readonly AnyKernel[] = [
  skyMeshRowsKernel,
  subtractSkyRowsKernel,
  convolveRowsKernel,
  localMaximaRowsKernel,
  measureBatchKernel,
];

/** A pool whose workers run KERNELS; size: worker threads (default: the cores, at most 8; 0 = this thread). */
export function startPool(size?: number): Promise<WorkerPool> {
  return WorkerPool.start(new URL('./pool-worker.ts', import.meta.url), size);
}
