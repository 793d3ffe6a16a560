/** Small robust statistics over typed arrays; `buf` is scratch that these functions reorder. */

/** k-th smallest of buf[0..n) (Hoare quickselect, in place). */
export function selectKth(buf: Float32Array | Float64Array, n: number, k: number): number {
  let lo = 0;
  let hi = n - 1;
  while (lo < hi) {
    const pivot = buf[(lo + hi) >> 1];
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (buf[i] < pivot) i++;
      while (buf[j] > pivot) j--;
      if (i <= j) {
        const t = buf[i]; buf[i] = buf[j]; buf[j] = t;
        i++; j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return buf[k];
  }
  return buf[k];
}

export function median(buf: Float32Array | Float64Array, n: number): number {
  if (n <= 0) return NaN;
  const h = n >> 1;
  const upper = selectKth(buf, n, h);
  if (n & 1) return upper;
  // after selection, buf[0..h) holds the smaller half; its max is the lower middle
  let lower = -Infinity;
  for (let i = 0; i < h; i++) if (buf[i] > lower) lower = buf[i];
  return 0.5 * (lower + upper);
}

/** Median of a plain number list (copies). */
export function medianOf(values: ArrayLike<number>): number {
  const a = Float64Array.from(values).filter((v) => Number.isFinite(v));
  return median(a, a.length);
}

/** Scaled median absolute deviation: 1.4826 * MAD estimates sigma for Gaussian data (common practice). */
export function madSigma(values: ArrayLike<number>): number {
  const a = Float64Array.from(values).filter((v) => Number.isFinite(v));
  if (a.length === 0) return NaN;
  const m = median(a.slice(), a.length);
  for (let i = 0; i < a.length; i++) a[i] = Math.abs(a[i] - m);
  return 1.4826 * median(a, a.length);
}

export interface ClippedStats {
  /** Background estimate: the Bertin & Arnouts (1996) mode 2.5*median - 1.5*mean, or the median in crowded boxes. */
  level: number;
  sigma: number;
  mean: number;
  median: number;
  count: number;
}

/**
 * Iterative 3-sigma clipping of buf[0..n) about the median, as in the Source Extractor
 * background estimator (Bertin & Arnouts 1996, A&AS 117, 393, section 3.1); reorders buf.
 */
export function clippedStats(buf: Float32Array, n: number, kappa = 3, maxIter = 6): ClippedStats {
  let count = n;
  let med = NaN;
  let mean = NaN;
  let sigma = NaN;
  for (let it = 0; it < maxIter && count > 2; it++) {
    let s = 0;
    let s2 = 0;
    for (let i = 0; i < count; i++) { const v = buf[i]; s += v; s2 += v * v; }
    mean = s / count;
    sigma = Math.sqrt(Math.max(0, s2 / count - mean * mean));
    // the upper middle element: for the hundreds of samples of a box, as good as the median
    med = count > 64 ? selectKth(buf, count, count >> 1) : median(buf, count);
    if (!(sigma > 0)) break;
    const lo = med - kappa * sigma;
    const hi = med + kappa * sigma;
    let m = 0;
    for (let i = 0; i < count; i++) { const v = buf[i]; if (v >= lo && v <= hi) buf[m++] = v; }
    if (m === count) break;
    count = m;
  }
  // Bertin & Arnouts 1996: mode = 2.5 med - 1.5 mean unless the box is crowded ((mean - med)/sigma >= 0.3)
  let level = med;
  if (sigma > 0 && Math.abs(mean - med) / sigma < 0.3) level = 2.5 * med - 1.5 * mean;
  return { level, sigma, mean, median: med, count };
}
