import type { Candidate, StarFlag } from './types.ts';
import type { StampInput } from './measure.ts';
import { skyNoiseAt, type SkyModel } from '../image/background.ts';

/**
 * A batch of stamps packed into transferable typed arrays, so worker threads get them
 * without per-star objects: pixels back to back, and 8 numbers of metadata per stamp.
 */
export interface StampBatch {
  pixels: Float32Array;
  /** per stamp: offset, w, h, originX, originY, skyVariance, saturated (0/1), sigmaGuess */
  meta: Float64Array;
  flags: (readonly StarFlag[])[];
  gain: number | null;
}

export const META = 8;

export function packStamps(
  residual: Float32Array,
  missing: Uint8Array | null,
  width: number,
  height: number,
  sky: SkyModel,
  candidates: readonly Candidate[],
  radius: number,
  sigmaGuess: number,
  gain: number | null,
): StampBatch {
  let total = 0;
  const size = 2 * radius + 1;
  total = candidates.length * size * size;
  const pixels = new Float32Array(total);
  const meta = new Float64Array(candidates.length * META);
  const flags: (readonly StarFlag[])[] = [];
  let off = 0;
  candidates.forEach((c, i) => {
    const ox = c.x - radius;
    const oy = c.y - radius;
    for (let ly = 0; ly < size; ly++) {
      const y = oy + ly;
      for (let lx = 0; lx < size; lx++) {
        const x = ox + lx;
        let v = NaN;
        if (x >= 0 && y >= 0 && x < width && y < height) {
          const k = y * width + x;
          if (!missing || !missing[k]) v = residual[k];
        }
        pixels[off + ly * size + lx] = v;
      }
    }
    const s = skyNoiseAt(sky, c.x, c.y);
    const m = i * META;
    meta[m] = off;
    meta[m + 1] = size;
    meta[m + 2] = size;
    meta[m + 3] = ox;
    meta[m + 4] = oy;
    meta[m + 5] = s * s;
    meta[m + 6] = c.flags.includes('saturated') ? 1 : 0;
    meta[m + 7] = sigmaGuess;
    flags.push(c.flags);
    off += size * size;
  });
  return { pixels, meta, flags, gain };
}

export function sliceBatch(b: StampBatch, from: number, to: number): StampBatch {
  const start = b.meta[from * META];
  const end = to < b.flags.length ? b.meta[to * META] : b.pixels.length;
  const meta = b.meta.slice(from * META, to * META);
  for (let i = 0; i < to - from; i++) meta[i * META] -= start;
  return { pixels: b.pixels.slice(start, end), meta, flags: b.flags.slice(from, to), gain: b.gain };
}

export function unpackStamp(b: StampBatch, i: number): StampInput {
  const m = i * META;
  const off = b.meta[m];
  const w = b.meta[m + 1];
  const h = b.meta[m + 2];
  return {
    stamp: b.pixels.subarray(off, off + w * h),
    w,
    h,
    originX: b.meta[m + 3],
    originY: b.meta[m + 4],
    skyVariance: b.meta[m + 5],
    gain: b.gain,
    saturated: b.meta[m + 6] === 1,
    sigmaGuessPx: b.meta[m + 7],
    flags: b.flags[i],
  };
}
