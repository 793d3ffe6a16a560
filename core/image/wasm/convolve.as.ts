// AssemblyScript source of the matched filter's separable convolution (convolveBand in
// ../convolve.ts, which stays the reference), compiled to WebAssembly with 128-bit SIMD by
// `npm run build:wasm` into convolve.wasm.ts. Two pixels per instruction in double precision,
// with the same operations in the same order as the TypeScript kernel, so the results are the
// same to the last bit (test/unit/wasm-modules.test.ts checks it, and that the compiled bytes
// match this source). The caller copies the band's rows in and the filtered rows out.

/** Start of the free memory the caller lays its arrays out in (8-byte aligned). */
export function heapBase(): usize { return (__heap_base + 15) & ~15; }

/** Grows the memory to hold `bytes` from heapBase(); false when it cannot. */
export function ensure(bytes: usize): bool {
  const need = <i32>((heapBase() + bytes + 0xffff) >>> 16);
  const have = memory.size();
  if (need <= have) return true;
  return memory.grow(need - have) >= 0;
}

/**
 * Rows [y0, y1) of the separable convolution of a height-row frame with the 2r+1 taps at t
 * (f64), written to out (row y at out + (y - y0) * width, f32). src holds rows [ya, ya + rows)
 * of the frame (f32); wx the per-column border weights (f64); ring 2 (2r+1) rows of scratch.
 */
export function convolve(src: usize, ya: i32, rows: i32, width: i32, height: i32, t: usize, r: i32, wx: usize, ring: usize, out: usize, y0: i32, y1: i32): void {
  const n = 2 * r + 1;
  const inner = width > 2 * r;
  let next = ya;
  for (let y = y0; y < y1; y++) {
    const need = min(height - 1, y + r);
    while (next <= need) { xRow(src + <usize>(next - ya) * <usize>width * 4, width, t, r, wx, ring + <usize>((next % n) * width) * 4, n, inner); next++; }
    const dst = out + <usize>((y - y0) * width) * 4;
    if (y - r >= 0 && y + r < height) {
      const c = ring + <usize>((((y - r) % n) + r) * width) * 4; // the centre row, rows above and below contiguous
      pass(c, dst, width, <usize>width * 4, t, r);
      continue;
    }
    let wsum: f64 = 0;
    for (let k = -r; k <= r; k++) if (y + k >= 0 && y + k < height) wsum += load<f64>(t + <usize>(r + k) * 8);
    const inv = 1 / wsum;
    for (let x = 0; x < width; x++) {
      let acc: f64 = 0;
      for (let k = -r; k <= r; k++) {
        if (y + k >= 0 && y + k < height) acc += load<f64>(t + <usize>(r + k) * 8) * <f64>load<f32>(ring + <usize>(((y + k) % n) * width + x) * 4);
      }
      store<f32>(dst + <usize>x * 4, <f32>(acc * inv));
    }
  }
}

/** One row filtered along x into its two ring slots. */
function xRow(row: usize, width: i32, t: usize, r: i32, wx: usize, slot: usize, n: i32, inner: bool): void {
  if (inner) pass(row + <usize>r * 4, slot + <usize>r * 4, width - 2 * r, 4, t, r);
  for (let x = 0; x < width; x++) {
    if (inner && x >= r && x < width - r) continue;
    let acc: f64 = 0;
    for (let k = -r; k <= r; k++) {
      const xx = x + k;
      if (xx >= 0 && xx < width) acc += load<f64>(t + <usize>(r + k) * 8) * <f64>load<f32>(row + <usize>xx * 4);
    }
    store<f32>(slot + <usize>x * 4, <f32>(acc / load<f64>(wx + <usize>x * 8)));
  }
  memory.copy(slot + <usize>(n * width) * 4, slot, <usize>width * 4);
}

/**
 * dst[i] = t0 s[i] + t1 (s[i - step] + s[i + step]) + ... for count pixels from s, two at a time:
 * the order of the TypeScript kernel's sum, in double precision, rounded to single on store.
 */
function pass(s: usize, dst: usize, count: i32, step: usize, t: usize, r: i32): void {
  const t0 = f64x2.splat(load<f64>(t + <usize>r * 8));
  let i = 0;
  for (; i + 1 < count; i += 2) {
    const p = s + <usize>i * 4;
    let acc = f64x2.mul(t0, f64x2.promote_low_f32x4(v128.load64_zero(p)));
    for (let k = 1; k <= r; k++) {
      const tk = f64x2.splat(load<f64>(t + <usize>(r + k) * 8));
      const off = <usize>k * step;
      const pair = f64x2.add(f64x2.promote_low_f32x4(v128.load64_zero(p - off)), f64x2.promote_low_f32x4(v128.load64_zero(p + off)));
      acc = f64x2.add(acc, f64x2.mul(tk, pair));
    }
    v128.store64_lane(dst + <usize>i * 4, f32x4.demote_f64x2_zero(acc), 0);
  }
  for (; i < count; i++) {
    const p = s + <usize>i * 4;
    let acc = load<f64>(t + <usize>r * 8) * <f64>load<f32>(p);
    for (let k = 1; k <= r; k++) {
      const off = <usize>k * step;
      acc += load<f64>(t + <usize>(r + k) * 8) * (<f64>load<f32>(p - off) + <f64>load<f32>(p + off));
    }
    store<f32>(dst + <usize>i * 4, <f32>acc);
  }
}
