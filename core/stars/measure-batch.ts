import { measureStar } from './measure.ts';
import { sliceBatch, unpackStamp, type StampBatch } from './stamps.ts';
import type { Star } from './types.ts';
import { SkyloupeError } from '../errors.ts';
import { defineKernel, type KernelRunner } from '../parallel/kernel.ts';

type Model = 'auto' | 'gaussian' | 'moffat';

export function measureBatch(batch: StampBatch, model: Model): Star[] {
  const out: Star[] = [];
  for (let i = 0; i < batch.flags.length; i++) out.push(measureStar(unpackStamp(batch, i), { model }));
  return out;
}

/** measureBatch as a pool kernel. */
export const measureBatchKernel = defineKernel('measure-batch', (a: { batch: StampBatch; model: Model }) => measureBatch(a.batch, a.model));

export interface MeasureAllOptions {
  model?: Model;
  signal?: AbortSignal;
  onProgress?: (fraction: number) => void;
}

/** Measure every stamp, in chunks over the pool; results in input order. */
export async function measureAll(pool: KernelRunner, batch: StampBatch, opts: MeasureAllOptions = {}): Promise<Star[]> {
  const n = batch.flags.length;
  const model = opts.model ?? 'auto';
  const chunk = Math.max(32, Math.ceil(n / Math.max(1, pool.size * 8)));
  const jobs: [number, number][] = [];
  for (let from = 0; from < n; from += chunk) jobs.push([from, Math.min(n, from + chunk)]);
  let done = 0;
  const results = await Promise.all(jobs.map(async ([from, to]) => {
    if (opts.signal?.aborted) throw new SkyloupeError('cancelled', 'analysis cancelled');
    const b = sliceBatch(batch, from, to);
    // the chunk's own copies move to the worker instead of being copied again
    const stars = await pool.run(measureBatchKernel, { batch: b, model }, [b.pixels.buffer as ArrayBuffer, b.meta.buffer as ArrayBuffer]);
    done++;
    opts.onProgress?.(done / jobs.length);
    return stars;
  }));
  return results.flat();
}
