import { parentPort } from 'node:worker_threads';
import { kernelTable, type AnyKernel } from './kernel.ts';

/** What the pool posts to a worker, and what comes back. */
export interface TaskMessage { id: number; kind: string; args: unknown }
export interface ResultMessage { id: number; result?: unknown; error?: string }

/**
 * The worker side of the pool: answers each task with its kernel's result, one message in, one
 * out. Called by the worker entry (core/pool-worker.ts) with every kernel it can run.
 */
export function serveKernels(kernels: readonly AnyKernel[]): void {
  const port = parentPort;
  if (!port) throw new Error('serveKernels runs in a worker thread');
  const table = kernelTable(kernels);
  port.on('message', (msg: TaskMessage) => {
    try {
      const kernel = table.get(msg.kind);
      if (!kernel) throw new Error(`no kernel '${msg.kind}' in the worker (list it in core/kernels.ts)`);
      port.postMessage({ id: msg.id, result: kernel.run(msg.args as never) } satisfies ResultMessage);
    } catch (err) {
      port.postMessage({ id: msg.id, error: err instanceof Error ? err.message : String(err) } satisfies ResultMessage);
    }
  });
}
