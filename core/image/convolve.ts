/** Normalised 1-D Gaussian taps for sigma (px), radius ceil(3 sigma). */
export function gaussianTaps(sigma: number): Float32Array {
  const r = Math.max(1, Math.ceil(3 * sigma));
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
  const nt = taps.length;
  // x pass over the rows the band needs
  for (let y = ya; y < yb; y++) {
    const row = y * width;
    const trow = (y - ya) * width;
    for (let x = 0; x < width; x++) {
      let s = 0;
      if (x >= r && x < width - r) {
        const base = row + x - r;
        for (let k = 0; k < nt; k++) s += taps[k] * src[base + k];
      } else {
        let wsum = 0;
        for (let k = -r; k <= r; k++) {
          const xx = x + k;
          if (xx < 0 || xx >= width) continue;
          s += taps[k + r] * src[row + xx];
          wsum += taps[k + r];
        }
        s /= wsum;
      }
      tmp[trow + x] = s;
    }
  }
  // y pass, row-wise accumulation keeps memory access sequential
  const acc = new Float64Array(width);
  for (let y = y0; y < y1; y++) {
    acc.fill(0);
    let wsum = 0;
    for (let k = -r; k <= r; k++) {
      const yy = y + k;
      if (yy < 0 || yy >= height) continue;
      const t = taps[k + r];
      wsum += t;
      const trow = (yy - ya) * width;
      for (let x = 0; x < width; x++) acc[x] += t * tmp[trow + x];
    }
    const inv = 1 / wsum;
    const row = y * width;
    for (let x = 0; x < width; x++) out[row + x] = acc[x] * inv;
  }
}

/** Noise sigma after filtering white noise of unit sigma with the 2-D separable kernel: the L2 norm of the kernel. */
export function filteredNoiseFactor(taps: Float32Array): number {
  let s = 0;
  for (let i = 0; i < taps.length; i++) s += taps[i] * taps[i];
  return s; // (sum t^2) over x times (sum t^2) over y, square-rooted: sqrt(s*s) = s
}
