/**
 * A kernel: a pure function over plain data (typed arrays, numbers, readonly objects) that the
 * worker pool runs on a worker thread, or on the calling thread when the pool has none. Each
 * step's module defines its own kernels with defineKernel; core/kernels.ts lists them for the
 * worker entry. The kind is the name a task carries across the thread boundary.
 */
export interface Kernel<A, R> {
  readonly kind: string;
  readonly run: (args: A) => R;
}

/** Any kernel, as the worker's registry holds them. */
export type AnyKernel = Kernel<never, unknown>;

export function defineKernel<A, R>(kind: string, run: (args: A) => R): Kernel<A, R> {
  return { kind, run };
}

/** What a step needs of the pool: its size (0 = the calling thread) and a way to run a kernel. */
export interface KernelRunner {
  readonly size: number;
  /** `transfer`: buffers moved to the worker instead of copied (ignored on the calling thread). */
  run<A, R>(kernel: Kernel<A, R>, args: A, transfer?: ArrayBuffer[]): Promise<R>;
}

/** The registry by kind; a kind listed twice is a mistake in the list, caught at start. */
export function kernelTable(kernels: readonly AnyKernel[]): Map<string, AnyKernel> {
  const table = new Map<string, AnyKernel>();
  for (const k of kernels) {
    if (table.has(k.kind)) throw new Error(`two kernels named '${k.kind}'`);
    table.set(k.kind, k);
  }
  return table;
}
