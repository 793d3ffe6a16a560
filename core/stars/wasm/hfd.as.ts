// AssemblyScript source of the half-flux diameter (halfFluxDiameterWithError, enclosedFlux,
// pixelCircleOverlap in ../hfd.ts, which stay the reference: see the method there), compiled
// to WebAssembly by `npm run build:wasm` into hfd.wasm.ts. test/unit/wasm-modules.test.ts checks
// it agrees with the TypeScript functions and that the compiled bytes match this source.

const CAP: i32 = 16384;
const STAMP = new StaticArray<f32>(CAP);
const VARI = new StaticArray<f32>(CAP);
// results: hfdPx, totalFlux, errPx
const OUT = new StaticArray<f64>(3);
const SQRT1_2: f64 = 0.7071067811865476;

export function capacity(): i32 { return CAP; }
export function stampPtr(): usize { return changetype<usize>(STAMP); }
export function variancePtr(): usize { return changetype<usize>(VARI); }
export function outPtr(): usize { return changetype<usize>(OUT); }

function cornerArea(x: f64, y: f64, r: f64): f64 {
  const sg: f64 = (x < 0) != (y < 0) ? -1 : 1;
  x = Math.abs(x);
  y = Math.abs(y);
  if (x > r) x = r;
  if (y > r) y = r;
  const r2 = r * r;
  if (x * x + y * y <= r2) return sg * x * y;
  const xc = Math.sqrt(r2 - y * y);
  const sx = Math.sqrt(Math.max(0, r2 - x * x));
  const t = Math.max(-1, Math.min(1, (x * y - xc * sx) / r2));
  return sg * (y * xc + 0.5 * (x * sx - xc * y + r2 * Math.asin(t)));
}

function overlap(dx: f64, dy: f64, r: f64): f64 {
  if (r <= 0) return 0;
  const x0 = dx - 0.5, x1 = dx + 0.5, y0 = dy - 0.5, y1 = dy + 0.5;
  return cornerArea(x1, y1, r) - cornerArea(x0, y1, r) - cornerArea(x1, y0, r) + cornerArea(x0, y0, r);
}

function enclosed(w: i32, h: i32, x: f64, y: f64, r: f64): f64 {
  if (!(r > 0)) return 0;
  const xa = <i32>Math.max(0, Math.floor(x - r - 0.5)), xb = <i32>Math.min(<f64>(w - 1), Math.ceil(x + r + 0.5));
  const ya = <i32>Math.max(0, Math.floor(y - r - 0.5)), yb = <i32>Math.min(<f64>(h - 1), Math.ceil(y + r + 0.5));
  const rin = r - SQRT1_2, rout = r + SQRT1_2;
  const rin2 = rin > 0 ? rin * rin : -1, rout2 = rout * rout;
  let f: f64 = 0;
  for (let py = ya; py <= yb; py++) {
    const dy = <f64>py - y;
    for (let px = xa; px <= xb; px++) {
      const v = <f64>unchecked(STAMP[py * w + px]);
      if (v != v) continue;
      const dx = <f64>px - x;
      const d2 = dx * dx + dy * dy;
      if (d2 >= rout2) continue;
      f += d2 <= rin2 ? v : v * overlap(dx, dy, r);
    }
  }
  return f;
}

/**
 * halfFluxDiameterWithError of ../hfd.ts on STAMP (and VARI when varMode is 2; a constant
 * variance constVar when 1; none when 0); r50Guess <= 0 means none. Results in OUT.
 */
export function hfd(w: i32, h: i32, x: f64, y: f64, maxRadius: f64, varMode: i32, constVar: f64, r50Guess: f64): void {
  const nan: f64 = NaN;
  unchecked(OUT[0] = nan); unchecked(OUT[1] = nan); unchecked(OUT[2] = nan);
  if (!(maxRadius > 0) || !isFinite(x) || !isFinite(y)) return;
  const R = maxRadius;
  const xa = <i32>Math.max(0, Math.floor(x - R - 0.5)), xb = <i32>Math.min(<f64>(w - 1), Math.ceil(x + R + 0.5));
  const ya = <i32>Math.max(0, Math.floor(y - R - 0.5)), yb = <i32>Math.min(<f64>(h - 1), Math.ceil(y + R + 0.5));
  const rin = R - SQRT1_2, rout2 = (R + SQRT1_2) * (R + SQRT1_2);
  const rin2 = rin > 0 ? rin * rin : -1;
  const withVar = varMode != 0;
  let total: f64 = 0, sv: f64 = 0;
  for (let py = ya; py <= yb; py++) {
    const dy = <f64>py - y;
    for (let px = xa; px <= xb; px++) {
      const i = py * w + px;
      const v = <f64>unchecked(STAMP[i]);
      if (v != v) continue;
      const dx = <f64>px - x;
      const d2 = dx * dx + dy * dy;
      if (d2 >= rout2) continue;
      const o = d2 <= rin2 ? 1 : overlap(dx, dy, R);
      total += o * v;
      if (withVar) {
        const s2 = varMode == 1 ? constVar : <f64>unchecked(VARI[i]);
        if (s2 > 0 && isFinite(s2)) sv += o * o * s2;
      }
    }
  }
  unchecked(OUT[1] = total);
  if (!(total > 0)) return;
  const half = 0.5 * total;
  let lo: f64 = 0, hi: f64 = -1, glo: f64 = -half, ghi: f64 = 0;
  if (r50Guess > 0 && r50Guess < R) {
    let r = r50Guess;
    let g = enclosed(w, h, x, y, r) - half;
    if (g >= 0) {
      hi = r; ghi = g;
      while (true) {
        r /= 1.3;
        if (r < 0.05) { lo = 0; glo = -half; break; }
        g = enclosed(w, h, x, y, r) - half;
        if (g < 0) { lo = r; glo = g; break; }
        hi = r; ghi = g;
      }
    } else {
      lo = r; glo = g;
      while (true) {
        r = Math.min(R, r * 1.3);
        g = enclosed(w, h, x, y, r) - half;
        if (g >= 0) { hi = r; ghi = g; break; }
        lo = r; glo = g;
        if (r >= R) break;
      }
    }
  } else {
    for (let r: f64 = 0.5; ; r += 0.5) {
      const rr = Math.min(r, R);
      const g = enclosed(w, h, x, y, rr) - half;
      if (g >= 0) { hi = rr; ghi = g; break; }
      lo = rr; glo = g;
      if (rr >= R) break;
    }
  }
  if (hi < 0) return;
  const slope = hi > lo ? (ghi - glo) / (hi - lo) : nan;
  let side = 0;
  for (let it = 0; it < 60 && hi - lo > 1e-4; it++) {
    let r = ghi != glo ? hi - (ghi * (hi - lo)) / (ghi - glo) : 0.5 * (lo + hi);
    if (!(r > lo && r < hi)) r = 0.5 * (lo + hi);
    const g = enclosed(w, h, x, y, r) - half;
    if (g == 0 || Math.abs(g) < 1e-12 * total) { lo = r; hi = r; break; }
    if (g > 0) {
      hi = r; ghi = g;
      if (side == 1) glo *= 0.5;
      side = 1;
    } else {
      lo = r; glo = g;
      if (side == -1) ghi *= 0.5;
      side = -1;
    }
  }
  unchecked(OUT[0] = lo + hi);
  if (withVar && slope > 0) unchecked(OUT[2] = Math.sqrt(sv) / slope);
}
