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
  const r = (taps.length - 1) >> 1;
  const tmp = new Float32Array(width * height);
  const out = new Float32Array(width * height);
  // x pass
  for (let y = 0; y < height; y++) {
    const row = y * width;
    for (let x = 0; x < width; x++) {
      let s = 0;
      if (x >= r && x < width - r) {
        const base = row + x - r;
        for (let k = 0; k < taps.length; k++) s += taps[k] * src[base + k];
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
      tmp[row + x] = s;
    }
  }
  // y pass, row-wise accumulation keeps memory access sequential
  const acc = new Float64Array(width);
  for (let y = 0; y < height; y++) {
    acc.fill(0);
    let wsum = 0;
    for (let k = -r; k <= r; k++) {
      const yy = y + k;
      if (yy < 0 || yy >= height) continue;
      const t = taps[k + r];
      wsum += t;
      const row = yy * width;
      for (let x = 0; x < width; x++) acc[x] += t * tmp[row + x];
    }
    const inv = 1 / wsum;
    const row = y * width;
    for (let x = 0; x < width; x++) out[row + x] = acc[x] * inv;
  }
  return out;
}

/** Noise sigma after filtering white noise of unit sigma with the 2-D separable kernel: the L2 norm of the kernel. */
export function filteredNoiseFactor(taps: Float32Array): number {
  let s = 0;
  for (let i = 0; i < taps.length; i++) s += taps[i] * taps[i];
  return s; // (sum t^2) over x times (sum t^2) over y, square-rooted: sqrt(s*s) = s
}
