// AssemblyScript source of the sky boxes' clipped statistics, compiled to WebAssembly by
// `npm run build:wasm` into sky-stats.wasm.ts. The same algorithm, step for step, as
// clippedStats / selectKth / median in ../stats.ts (single precision samples, double
// precision sums), which stay the reference: test/unit/wasm-modules.test.ts checks the two
// agree exactly and that the compiled bytes match this source. Why: compiled up front, it
// skips the JIT warm-up every fresh worker thread pays for the JavaScript version.

import { selectKth } from './select.as';

const CAP: i32 = 65536;
const BUF = new StaticArray<f32>(CAP);
// results: level, sigma, mean, median, count
const OUT = new StaticArray<f64>(5);

export function capacity(): i32 { return CAP; }
export function samplesPtr(): usize { return changetype<usize>(BUF); }
export function outPtr(): usize { return changetype<usize>(OUT); }

function median(n: i32): f64 {
  if (n <= 0) return NaN;
  const h = n >> 1;
  const upper = selectKth(BUF, n, h);
  if (n & 1) return upper;
  let lower: f64 = -Infinity;
  for (let i = 0; i < h; i++) { const v = <f64>unchecked(BUF[i]); if (v > lower) lower = v; }
  return 0.5 * (lower + upper);
}

/** clippedStats(BUF, n, kappa, maxIter) of ../stats.ts; reorders BUF. */
export function clipped(n: i32, kappa: f64, maxIter: i32): void {
  let count = n;
  let med: f64 = NaN;
  let mean: f64 = NaN;
  let sigma: f64 = NaN;
  for (let it = 0; it < maxIter && count > 2; it++) {
    let s: f64 = 0;
    let s2: f64 = 0;
    for (let i = 0; i < count; i++) { const v = <f64>unchecked(BUF[i]); s += v; s2 += v * v; }
    mean = s / <f64>count;
    sigma = Math.sqrt(Math.max(0, s2 / <f64>count - mean * mean));
    med = count > 64 ? selectKth(BUF, count, count >> 1) : median(count);
    if (!(sigma > 0)) break;
    const lo = med - kappa * sigma;
    const hi = med + kappa * sigma;
    let m = 0;
    for (let i = 0; i < count; i++) { const v = unchecked(BUF[i]); if (<f64>v >= lo && <f64>v <= hi) { unchecked(BUF[m] = v); m++; } }
    if (m == count) break;
    count = m;
  }
  let level = med;
  if (sigma > 0 && Math.abs(mean - med) / sigma < 0.3) level = 2.5 * med - 1.5 * mean;
  unchecked(OUT[0] = level);
  unchecked(OUT[1] = sigma);
  unchecked(OUT[2] = mean);
  unchecked(OUT[3] = med);
  unchecked(OUT[4] = <f64>count);
}
