import { measureStar } from './measure.ts';
import { unpackStamp, type StampBatch } from './stamps.ts';
import type { Star } from './types.ts';

export function measureBatch(batch: StampBatch, model: 'auto' | 'gaussian' | 'moffat'): Star[] {
  const out: Star[] = [];
  for (let i = 0; i < batch.flags.length; i++) out.push(measureStar(unpackStamp(batch, i), { model }));
  return out;
}
