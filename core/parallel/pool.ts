import { Worker } from 'node:worker_threads';
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import os from 'node:os';
import { SkyloupeError } from '../errors.ts';
import type { Kernel, KernelRunner } from './kernel.ts';
import type { ResultMessage, TaskMessage } from './serve.ts';

type WorkerSource = { url: URL; workerData?: unknown } | { code: string };
const sources = new Map<string, WorkerSource>();

/**
 * How to start the worker whose TypeScript entry is `entry`. A bundled build ships it as
 * <name>.js beside the bundle (entry is then resolved against the bundle). From sources, it
 * is bundled once per process with esbuild (about 20 ms; a worker then starts in about 60 ms
 * instead of 300 ms through the tsx loader), falling back to the tsx loader (boot.mjs).
 */
async function workerSource(entry: URL): Promise<WorkerSource> {
  const cached = sources.get(entry.href);
  if (cached) return cached;
  let source: WorkerSource;
  const built = new URL(entry.href.replace(/\.ts$/, '.js'));
  if (built.protocol === 'file:' && existsSync(fileURLToPath(built))) source = { url: built };
  else {
    try {
      const esbuild = await import('esbuild');
      const out = await esbuild.build({
        entryPoints: [fileURLToPath(entry)],
        bundle: true, platform: 'node', format: 'cjs', target: 'node20', write: false, logLevel: 'silent',
      });
      source = { code: out.outputFiles[0].text };
    } catch {
      source = { url: new URL('./boot.mjs', import.meta.url), workerData: { entry: entry.href } };
    }
  }
  sources.set(entry.href, source);
  return source;
}

interface Job { msg: Omit<TaskMessage, 'id'>; transfer: ArrayBuffer[]; resolve: (v: unknown) => void; reject: (e: unknown) => void }

/**
 * Worker threads that run kernels (see kernel.ts), started once per analysis so their start-up
 * overlaps the serial steps. With size 0 every kernel runs on the calling thread (same code,
 * same results). Typed arrays on SharedArrayBuffers are shared, not copied.
 */
export class WorkerPool implements KernelRunner {
  private readonly workers: Worker[];
  private readonly idle: Worker[];
  private readonly queue: Job[] = [];
  private readonly pending = new Map<number, { resolve: (v: unknown) => void; reject: (e: unknown) => void; worker: Worker }>();
  private nextId = 0;
  private closed = false;

  private constructor(size: number, source: WorkerSource | null) {
    this.workers = Array.from({ length: size }, () =>
      'code' in source! ? new Worker(source.code, { eval: true }) : new Worker(source!.url, { workerData: source!.workerData }));
    this.idle = [...this.workers];
    for (const w of this.workers) {
      w.unref();
      w.on('message', (msg: ResultMessage) => {
        const p = this.pending.get(msg.id);
        if (!p) return;
        this.pending.delete(msg.id);
        if (msg.error !== undefined) p.reject(new Error(`worker: ${msg.error}`)); else p.resolve(msg.result);
        this.idle.push(w);
        this.pump();
      });
      w.on('error', (err) => {
        for (const [id, p] of this.pending) if (p.worker === w) { this.pending.delete(id); p.reject(err); }
      });
    }
  }

  /**
   * `entry`: the worker's TypeScript entry, which serves the kernels (serve.ts).
   * Default size: the available cores, capped at 8.
   */
  static async start(entry: URL, size?: number): Promise<WorkerPool> {
    const n = Math.max(0, Math.min(size ?? os.availableParallelism(), 8));
    return new WorkerPool(n, n > 0 ? await workerSource(entry) : null);
  }

  get size(): number {
    return this.workers.length;
  }

  run<A, R>(kernel: Kernel<A, R>, args: A, transfer: ArrayBuffer[] = []): Promise<R> {
    if (this.closed) return Promise.reject(new Error('worker pool closed'));
    if (this.workers.length === 0) {
      try { return Promise.resolve(kernel.run(args)); } catch (err) { return Promise.reject(err); }
    }
    return new Promise<R>((resolve, reject) => {
      this.queue.push({ msg: { kind: kernel.kind, args }, transfer, resolve: resolve as (v: unknown) => void, reject });
      this.pump();
    });
  }

  private pump(): void {
    while (this.idle.length && this.queue.length) {
      const w = this.idle.pop()!;
      const job = this.queue.shift()!;
      const id = this.nextId++;
      this.pending.set(id, { resolve: job.resolve, reject: job.reject, worker: w });
      w.postMessage({ id, ...job.msg } satisfies TaskMessage, job.transfer);
    }
  }

  async close(): Promise<void> {
    this.closed = true;
    for (const j of this.queue.splice(0)) j.reject(new SkyloupeError('cancelled', 'analysis cancelled'));
    await Promise.all(this.workers.map((w) => w.terminate()));
  }
}
