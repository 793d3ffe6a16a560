import { Worker } from 'node:worker_threads';
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import os from 'node:os';
import { runTask, type WorkerTask } from './measure-worker.ts';
import { sliceBatch, type StampBatch } from './stamps.ts';
import type { Star } from './types.ts';
import { SkyloupeError } from '../errors.ts';
import { meshGeometry, skyFromMesh, type BackgroundOptions, type SkyModel } from '../image/background.ts';

type WorkerSource = { url: URL } | { code: string };
let cachedSource: WorkerSource | null = null;

/**
 * A bundled build ships measure-worker.js beside this module. From sources, the worker
 * is bundled once per process with esbuild (about 20 ms; a worker then starts in about
 * 60 ms instead of 300 ms through the tsx loader), falling back to the tsx loader.
 */
async function workerSource(): Promise<WorkerSource> {
  if (cachedSource) return cachedSource;
  const js = new URL('./measure-worker.js', import.meta.url);
  if (js.protocol === 'file:' && existsSync(fileURLToPath(js))) return (cachedSource = { url: js });
  try {
    const esbuild = await import('esbuild');
    const out = await esbuild.build({
      entryPoints: [fileURLToPath(new URL('./measure-worker.ts', import.meta.url))],
      bundle: true, platform: 'node', format: 'cjs', target: 'node20', write: false, logLevel: 'silent',
    });
    return (cachedSource = { code: out.outputFiles[0].text });
  } catch {
    return (cachedSource = { url: new URL('./measure-worker-boot.mjs', import.meta.url) });
  }
}

/**
 * Worker threads for the pipeline, started once per analysis so their start-up overlaps
 * the serial steps. With size 0 every task runs on the calling thread (same code, same
 * results). Typed arrays on SharedArrayBuffers are shared, not copied.
 */
export class WorkerPool {
  private readonly workers: Worker[];
  private readonly idle: Worker[];
  private readonly queue: { task: WorkerTask; transfer: ArrayBuffer[]; resolve: (v: unknown) => void; reject: (e: unknown) => void }[] = [];
  private readonly pending = new Map<number, { resolve: (v: unknown) => void; reject: (e: unknown) => void; worker: Worker }>();
  private nextId = 0;
  private closed = false;

  private constructor(size: number, source: WorkerSource | null) {
    this.workers = Array.from({ length: size }, () =>
      'code' in source! ? new Worker(source.code, { eval: true }) : new Worker(source!.url));
    this.idle = [...this.workers];
    for (const w of this.workers) {
      w.unref();
      w.on('message', (msg: { id: number; result?: unknown; error?: string }) => {
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

  /** Default size: the available cores, capped at 8. */
  static async start(size?: number): Promise<WorkerPool> {
    const n = Math.max(0, Math.min(size ?? os.availableParallelism(), 8));
    return new WorkerPool(n, n > 0 ? await workerSource() : null);
  }

  get size(): number {
    return this.workers.length;
  }

  run<T>(task: WorkerTask, transfer: ArrayBuffer[] = []): Promise<T> {
    if (this.closed) return Promise.reject(new Error('worker pool closed'));
    if (this.workers.length === 0) {
      try { return Promise.resolve(runTask(task) as T); } catch (err) { return Promise.reject(err); }
    }
    return new Promise<T>((resolve, reject) => {
      this.queue.push({ task, transfer, resolve: resolve as (v: unknown) => void, reject });
      this.pump();
    });
  }

  private pump(): void {
    while (this.idle.length && this.queue.length) {
      const w = this.idle.pop()!;
      const job = this.queue.shift()!;
      const id = this.nextId++;
      this.pending.set(id, { resolve: job.resolve, reject: job.reject, worker: w });
      w.postMessage({ id, task: job.task }, job.transfer);
    }
  }

  async close(): Promise<void> {
    this.closed = true;
    for (const j of this.queue.splice(0)) j.reject(new SkyloupeError('cancelled', 'analysis cancelled'));
    await Promise.all(this.workers.map((w) => w.terminate()));
  }
}

/** A Float32Array on shared memory, so workers read and write it in place. */
export function sharedFloat32(n: number): Float32Array {
  return new Float32Array(new SharedArrayBuffer(n * 4));
}

function bands(n: number, parts: number): [number, number][] {
  const out: [number, number][] = [];
  const k = Math.max(1, Math.min(parts, n));
  for (let i = 0; i < k; i++) out.push([Math.floor((i * n) / k), Math.floor(((i + 1) * n) / k)]);
  return out;
}

/** Number of row bands: a few per worker keeps both cores busy to the end. */
function parts(pool: WorkerPool): number {
  return Math.max(1, pool.size * 3);
}

export async function parallelSky(pool: WorkerPool, data: Float32Array, width: number, height: number, opts: BackgroundOptions = {}): Promise<SkyModel> {
  const g = meshGeometry(width, height, opts);
  const level = new Float32Array(g.meshW * g.meshH);
  const sigma = new Float32Array(g.meshW * g.meshH);
  await Promise.all(bands(g.meshH, parts(pool)).map(async ([my0, my1]) => {
    const r = await pool.run<{ level: Float32Array; sigma: Float32Array }>({ kind: 'sky-rows', data, width, height, geometry: g, my0, my1 });
    level.set(r.level, my0 * g.meshW);
    sigma.set(r.sigma, my0 * g.meshW);
  }));
  return skyFromMesh(width, height, g, level, sigma, opts);
}

export async function parallelSubtract(pool: WorkerPool, data: Float32Array, sky: SkyModel): Promise<{ residual: Float32Array; missing: Uint8Array | null }> {
  const residual = sharedFloat32(sky.width * sky.height);
  const missing = new Uint8Array(new SharedArrayBuffer(sky.width * sky.height));
  const any = await Promise.all(bands(sky.height, parts(pool)).map(([y0, y1]) =>
    pool.run<boolean>({ kind: 'subtract', data, sky, y0, y1, out: residual, missing })));
  return { residual, missing: any.some(Boolean) ? missing : null };
}

export async function parallelConvolve(pool: WorkerPool, src: Float32Array, width: number, height: number, taps: Float32Array): Promise<Float32Array> {
  const out = sharedFloat32(width * height);
  await Promise.all(bands(height, parts(pool)).map(([y0, y1]) => pool.run({ kind: 'convolve', src, width, height, taps, y0, y1, out })));
  return out;
}

/** localMaximaRows over the frame in bands, concatenated in raster order (as one call would give). */
export async function parallelMaxima(pool: WorkerPool, f: Float32Array, width: number, height: number, sky: SkyModel, nf: number, threshold: number): Promise<Float64Array> {
  const parts_ = await Promise.all(bands(height, parts(pool)).map(([y0, y1]) =>
    pool.run<Float64Array>({ kind: 'maxima', f, width, height, sky, nf, threshold, y0, y1 })));
  const out = new Float64Array(parts_.reduce((s, p) => s + p.length, 0));
  let o = 0;
  for (const p of parts_) { out.set(p, o); o += p.length; }
  return out;
}

export interface MeasureOptions {
  model?: 'auto' | 'gaussian' | 'moffat';
  signal?: AbortSignal;
  onProgress?: (fraction: number) => void;
}

/** Measure every stamp, in chunks over the pool; results in input order. */
export async function measureAll(pool: WorkerPool, batch: StampBatch, opts: MeasureOptions = {}): Promise<Star[]> {
  const n = batch.flags.length;
  const model = opts.model ?? 'auto';
  const chunk = Math.max(32, Math.ceil(n / Math.max(1, pool.size * 8)));
  const jobs: [number, number][] = [];
  for (let from = 0; from < n; from += chunk) jobs.push([from, Math.min(n, from + chunk)]);
  let done = 0;
  const results = await Promise.all(jobs.map(async ([from, to]) => {
    if (opts.signal?.aborted) throw new SkyloupeError('cancelled', 'analysis cancelled');
    const b = sliceBatch(batch, from, to);
    const stars = await pool.run<Star[]>({ kind: 'measure', batch: b, model }, pool.size > 0 ? [b.pixels.buffer as ArrayBuffer, b.meta.buffer as ArrayBuffer] : []);
    done++;
    opts.onProgress?.(done / jobs.length);
    return stars;
  }));
  return results.flat();
}
