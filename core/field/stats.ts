/** Robust statistics and a seeded random source for bootstraps. Pure functions. */

/** Deterministic PRNG (mulberry32), so bootstraps give the same answer on every run. */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal deviate (Box-Muller). */
export function gauss(rand: () => number): number {
  let u = 0;
  while (u <= 1e-300) u = rand();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rand());
}

export function median(values: ArrayLike<number>): number {
  const n = values.length;
  if (n === 0) return NaN;
  const a = Float64Array.from(values as ArrayLike<number>).sort();
  const h = n >> 1;
  return n % 2 ? a[h] : 0.5 * (a[h - 1] + a[h]);
}

/** Median absolute deviation scaled to a Gaussian sigma (1.4826, the normal-consistency constant). */
export function madSigma(values: ArrayLike<number>, centre = median(values)): number {
  const n = values.length;
  if (n === 0) return NaN;
  const d = new Float64Array(n);
  for (let i = 0; i < n; i++) d[i] = Math.abs(values[i] - centre);
  return 1.4826 * median(d);
}

export interface RobustMean {
  mean: number;
  /** Standard error of the mean. */
  err: number;
  /** Values kept after clipping. */
  n: number;
  std: number;
}

/**
 * Mean after iterative 3-sigma clipping about the median (MAD scale), with its standard
 * error std/sqrt(n). For n < 2 the error is NaN.
 */
export function clippedMean(values: ArrayLike<number>, k = 3, iterations = 3): RobustMean {
  let kept = Float64Array.from(values as ArrayLike<number>).filter(Number.isFinite);
  for (let it = 0; it < iterations && kept.length > 4; it++) {
    const m = median(kept);
    const s = madSigma(kept, m);
    if (!(s > 0)) break;
    const next = kept.filter((v) => Math.abs(v - m) <= k * s);
    if (next.length === kept.length) break;
    kept = next;
  }
  const n = kept.length;
  if (n === 0) return { mean: NaN, err: NaN, n: 0, std: NaN };
  let sum = 0;
  for (const v of kept) sum += v;
  const mean = sum / n;
  let ss = 0;
  for (const v of kept) ss += (v - mean) * (v - mean);
  const std = n > 1 ? Math.sqrt(ss / (n - 1)) : NaN;
  return { mean, err: n > 1 ? std / Math.sqrt(n) : NaN, n, std };
}

/** Median with its standard error (sqrt(pi/2) * sigma / sqrt(n), the large-sample result for normal data). */
export function medianWithErr(values: ArrayLike<number>): { value: number; err: number; n: number } {
  const finite = Float64Array.from(values as ArrayLike<number>).filter(Number.isFinite);
  const n = finite.length;
  if (n === 0) return { value: NaN, err: NaN, n: 0 };
  const m = median(finite);
  const s = madSigma(finite, m);
  return { value: m, err: n > 1 ? 1.2533 * s / Math.sqrt(n) : NaN, n };
}

/** Sample standard deviation. */
export function std(values: ArrayLike<number>): number {
  const n = values.length;
  if (n < 2) return NaN;
  let s = 0;
  for (let i = 0; i < n; i++) s += values[i];
  const m = s / n;
  let ss = 0;
  for (let i = 0; i < n; i++) ss += (values[i] - m) ** 2;
  return Math.sqrt(ss / (n - 1));
}

/** Angle in degrees reduced to (-90, 90]. */
export function axisDeg(deg: number): number {
  let a = deg % 180;
  if (a <= -90) a += 180;
  if (a > 90) a -= 180;
  return a;
}

/** Smallest difference between two axes (mod 180), degrees in [0, 90]. */
export function axisDiffDeg(a: number, b: number): number {
  const d = Math.abs(axisDeg(a - b));
  return d;
}

/** Round for display/report without trailing noise. */
export function round(v: number | null | undefined, digits = 3): number | null {
  if (v === null || v === undefined || !Number.isFinite(v)) return null;
  const f = 10 ** digits;
  return Math.round(v * f) / f;
}

/** Circular standard deviation of axial angles (deg), from bootstrap samples. */
export function axialStdDeg(samples: readonly number[], reference: number): number {
  if (samples.length < 2) return NaN;
  const d = samples.map((s) => axisDeg(s - reference));
  let ss = 0;
  for (const v of d) ss += v * v;
  return Math.sqrt(ss / (d.length - 1));
}
