import { Worker } from 'node:worker_threads';
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import os from 'node:os';
import { measureBatch } from './measure-batch.ts';
import { sliceBatch, type StampBatch } from './stamps.ts';
import type { Star } from './types.ts';
import { SkyloupeError } from '../errors.ts';

export interface PoolOptions {
  /** Worker threads; 0 measures on the calling thread. Default: available cores. */
  workers?: number;
  model?: 'auto' | 'gaussian' | 'moffat';
  signal?: AbortSignal;
  onProgress?: (fraction: number) => void;
}

function workerUrl(): URL {
  // a bundled build ships measure-worker.js beside this module; sources go through tsx
  const js = new URL('./measure-worker.js', import.meta.url);
  if (js.protocol === 'file:' && existsSync(fileURLToPath(js))) return js;
  return new URL('./measure-worker-boot.mjs', import.meta.url);
}

/** Below this many stars, starting threads costs more than it saves. */
const MIN_PARALLEL = 300;

/** Measure every stamp, spread over worker threads in chunks; results in input order. */
export async function measureAll(batch: StampBatch, opts: PoolOptions = {}): Promise<Star[]> {
  const n = batch.flags.length;
  const model = opts.model ?? 'auto';
  const nWorkers = Math.min(opts.workers ?? os.availableParallelism(), 8);
  if (nWorkers <= 0 || n < MIN_PARALLEL) {
    if (opts.signal?.aborted) throw new SkyloupeError('cancelled', 'analysis cancelled');
    const stars = measureBatch(batch, model);
    opts.onProgress?.(1);
    return stars;
  }
  const chunk = Math.max(64, Math.ceil(n / (nWorkers * 6)));
  const jobs: { from: number; to: number }[] = [];
  for (let from = 0; from < n; from += chunk) jobs.push({ from, to: Math.min(n, from + chunk) });
  const results: Star[][] = new Array(jobs.length);
  const url = workerUrl();
  const workers = Array.from({ length: Math.min(nWorkers, jobs.length) }, () => new Worker(url));
  let next = 0;
  let done = 0;
  try {
    await new Promise<void>((resolve, reject) => {
      const onAbort = () => reject(new SkyloupeError('cancelled', 'analysis cancelled'));
      opts.signal?.addEventListener('abort', onAbort, { once: true });
      const feed = (w: Worker) => {
        if (next >= jobs.length) return;
        const id = next++;
        const b = sliceBatch(batch, jobs[id].from, jobs[id].to);
        w.postMessage({ id, batch: b, model }, [b.pixels.buffer as ArrayBuffer, b.meta.buffer as ArrayBuffer]);
      };
      for (const w of workers) {
        w.on('message', (msg: { id: number; stars?: Star[]; error?: string }) => {
          if (msg.error !== undefined || !msg.stars) { reject(new Error(`measurement worker: ${msg.error}`)); return; }
          results[msg.id] = msg.stars;
          done++;
          opts.onProgress?.(done / jobs.length);
          if (done === jobs.length) resolve(); else feed(w);
        });
        w.on('error', reject);
        feed(w);
      }
    });
  } finally {
    await Promise.all(workers.map((w) => w.terminate()));
  }
  return results.flat();
}
