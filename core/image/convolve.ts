/** Normalised 1-D Gaussian taps for sigma (px), radius ceil(nSigma * sigma). */
export function gaussianTaps(sigma: number, nSigma = 3): Float32Array {
  const r = Math.max(1, Math.ceil(nSigma * sigma));
  const taps = new Float32Array(2 * r + 1);
  let s = 0;
  for (let i = -r; i <= r; i++) {
    const v = Math.exp((-0.5 * i * i) / (sigma * sigma));
    taps[i + r] = v;
    s += v;
  }
  for (let i = 0; i < taps.length; i++) taps[i] /= s;
  return taps;
}

/**
 * Separable convolution with the same symmetric taps along x then y; borders are
 * handled by renormalising over the taps that fall inside the frame.
 */
export function convolveSeparable(src: Float32Array, width: number, height: number, taps: Float32Array): Float32Array {
  const out = new Float32Array(width * height);
  convolveBand(src, width, height, taps, 0, height, out);
  return out;
}

/**
 * Rows [y0, y1) of the separable convolution, written into `out` (full-frame layout).
 * Bands are independent, so worker threads can each take one over shared memory.
 */
export function convolveBand(src: Float32Array, width: number, height: number, taps: Float32Array, y0: number, y1: number, out: Float32Array): void {
  const r = (taps.length - 1) >> 1;
  const ya = Math.max(0, y0 - r);
  const yb = Math.min(height, y1 + r);
  const tmp = new Float32Array((yb - ya) * width);
  // taps as doubles, and the border weights: inside the frame the weights sum to 1
  const t = Float64Array.from(taps);
  const acc = new Float64Array(width);
  const wx = borderWeights(t, width);
  // x pass, one tap at a time over the whole row: sequential access, symmetric taps paired
  for (let y = ya; y < yb; y++) {
    const row = y * width;
    const t0 = t[r];
    for (let x = 0; x < width; x++) acc[x] = t0 * src[row + x];
    for (let k = 1; k <= r; k++) {
      const tk = t[r + k];
      // both neighbours in one pass where both exist; the borders take the one that does
      const lo = Math.min(k, width);
      const hi = Math.max(lo, width - k);
      for (let x = lo; x < hi; x++) acc[x] += tk * (src[row + x - k] + src[row + x + k]);
      for (let x = 0; x < lo; x++) if (x + k < width) acc[x] += tk * src[row + x + k];
      for (let x = hi; x < width; x++) if (x - k >= 0) acc[x] += tk * src[row + x - k];
    }
    const trow = (y - ya) * width;
    for (let x = 0; x < width; x++) tmp[trow + x] = acc[x] / wx[x];
  }
  // y pass, row-wise accumulation keeps memory access sequential
  for (let y = y0; y < y1; y++) {
    const c = (y - ya) * width;
    const t0 = t[r];
    for (let x = 0; x < width; x++) acc[x] = t0 * tmp[c + x];
    let wsum = t0;
    for (let k = 1; k <= r; k++) {
      const tk = t[r + k];
      const up = y - k >= 0;
      const down = y + k < height;
      const a = (y - k - ya) * width;
      const b = (y + k - ya) * width;
      if (up && down) {
        for (let x = 0; x < width; x++) acc[x] += tk * (tmp[a + x] + tmp[b + x]);
        wsum += 2 * tk;
      } else if (up) {
        for (let x = 0; x < width; x++) acc[x] += tk * tmp[a + x];
        wsum += tk;
      } else if (down) {
        for (let x = 0; x < width; x++) acc[x] += tk * tmp[b + x];
        wsum += tk;
      }
    }
    const inv = 1 / wsum;
    const row = y * width;
    for (let x = 0; x < width; x++) out[row + x] = acc[x] * inv;
  }
}

/** Sum of the taps that fall inside a row of this width, per output x (1 away from the borders). */
function borderWeights(t: Float64Array, width: number): Float64Array {
  const r = (t.length - 1) >> 1;
  const w = new Float64Array(width);
  for (let x = 0; x < width; x++) {
    if (x >= r && x < width - r) { w[x] = 1; continue; }
    let s = 0;
    for (let k = -r; k <= r; k++) if (x + k >= 0 && x + k < width) s += t[k + r];
    w[x] = s;
  }
  return w;
}

/** Noise sigma after filtering white noise of unit sigma with the 2-D separable kernel: the L2 norm of the kernel. */
export function filteredNoiseFactor(taps: Float32Array): number {
  let s = 0;
  for (let i = 0; i < taps.length; i++) s += taps[i] * taps[i];
  return s; // (sum t^2) over x times (sum t^2) over y, square-rooted: sqrt(s*s) = s
}
