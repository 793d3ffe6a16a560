// AssemblyScript source of the adaptive moments (adaptiveMoments and adaptiveMomentErrors in
// ../moments.ts, which stay the reference: see the method there), compiled to WebAssembly by
// `npm run build:wasm` into moments.wasm.ts. test/unit/wasm-modules.test.ts checks it agrees
// with the TypeScript functions and that the compiled bytes match this source.

const CAP: i32 = 16384;
const MAX_ITER: i32 = 60;
const QMAX: f64 = 25;
const STAMP = new StaticArray<f32>(CAP);
const VARI = new StaticArray<f32>(CAP);
const WGT = new StaticArray<f64>(CAP);
const COLW = new StaticArray<f64>(CAP);
const S = new StaticArray<f64>(12);
// moments: x, y, ixx, iyy, ixy, e1, e2, flux, comaX, comaY, converged, iterations;
// errors (from 12): x, y, e1, e2
const OUT = new StaticArray<f64>(16);
let BX0: i32 = 0, BX1: i32 = 0, BY0: i32 = 0, BY1: i32 = 0;

export function capacity(): i32 { return CAP; }
export function stampPtr(): usize { return changetype<usize>(STAMP); }
export function variancePtr(): usize { return changetype<usize>(VARI); }
export function outPtr(): usize { return changetype<usize>(OUT); }

function gaussianWeights(w: i32, h: i32, xc: f64, yc: f64, ia: f64, ib: f64, ic: f64, wxx: f64, wyy: f64): bool {
  const rx = Math.sqrt(QMAX * wxx), ry = Math.sqrt(QMAX * wyy);
  const x0 = <i32>Math.max(0, Math.ceil(xc - rx)), x1 = <i32>Math.min(<f64>(w - 1), Math.floor(xc + rx));
  const y0 = <i32>Math.max(0, Math.ceil(yc - ry)), y1 = <i32>Math.min(<f64>(h - 1), Math.floor(yc + ry));
  BX0 = x0; BX1 = x1; BY0 = y0; BY1 = y1;
  if (!(x1 >= x0 && y1 >= y0)) return false;
  const separable = Math.abs(ib) * Math.max(Math.abs(<f64>x0 - xc), Math.abs(<f64>x1 - xc)) * Math.max(Math.abs(<f64>y0 - yc), Math.abs(<f64>y1 - yc)) < 300;
  for (let x = x0; x <= x1; x++) { const dx = <f64>x - xc; unchecked(COLW[x] = Math.exp(-0.5 * ia * dx * dx)); }
  for (let y = y0; y <= y1; y++) {
    const dy = <f64>y - yc;
    const row = y * w;
    let t: f64 = separable ? Math.exp(-0.5 * (ic * dy * dy + 2 * ib * (<f64>x0 - xc) * dy)) : 0;
    const ratio: f64 = separable ? Math.exp(-ib * dy) : 0;
    for (let x = x0; x <= x1; x++) {
      const dx = <f64>x - xc;
      const q = dx * (ia * dx + 2 * ib * dy) + ic * dy * dy;
      unchecked(WGT[row + x] = q > QMAX ? 0 : separable ? unchecked(COLW[x]) * t : Math.exp(-0.5 * q));
      t *= ratio;
    }
  }
  return true;
}

function pass(w: i32, h: i32, xc: f64, yc: f64, wxx: f64, wyy: f64, wxy: f64, third: bool): bool {
  const det = wxx * wyy - wxy * wxy;
  if (!(det > 0) || !(wxx > 0)) return false;
  if (!gaussianWeights(w, h, xc, yc, wyy / det, -wxy / det, wxx / det, wxx, wyy)) return false;
  let s0: f64 = 0, sx: f64 = 0, sy: f64 = 0, sxx: f64 = 0, syy: f64 = 0, sxy: f64 = 0, cx: f64 = 0, cy: f64 = 0, np: f64 = 0;
  for (let y = BY0; y <= BY1; y++) {
    const dy = <f64>y - yc;
    const row = y * w;
    for (let x = BX0; x <= BX1; x++) {
      const v = <f64>unchecked(STAMP[row + x]);
      const g = unchecked(WGT[row + x]);
      if (v != v || g == 0) continue;
      const dx = <f64>x - xc;
      const wi = g * v;
      s0 += wi;
      const wdx = wi * dx, wdy = wi * dy;
      sx += wdx; sy += wdy;
      sxx += wdx * dx; syy += wdy * dy; sxy += wdx * dy;
      if (third) {
        const r2 = dx * dx + dy * dy;
        cx += wdx * r2; cy += wdy * r2;
      }
      np += 1;
    }
  }
  unchecked(S[0] = s0); unchecked(S[1] = sx); unchecked(S[2] = sy); unchecked(S[3] = sxx); unchecked(S[4] = syy);
  unchecked(S[5] = sxy); unchecked(S[6] = cx); unchecked(S[7] = cy); unchecked(S[8] = np);
  return true;
}

/** fixedMoments(STAMP, w, h, x, y, ixx, iyy, ixy) of ../moments.ts; results in OUT[0..12) as moments(). */
export function fixedMoments(w: i32, h: i32, x: f64, y: f64, ixx: f64, iyy: f64, ixy: f64): void {
  const T = ixx + iyy;
  const nan: f64 = NaN;
  unchecked(OUT[0] = x); unchecked(OUT[1] = y); unchecked(OUT[11] = 0);
  if (!pass(w, h, x, y, ixx, iyy, ixy, true) || !(unchecked(S[0]) > 0) || !(T > 0)) {
    for (let i = 2; i < 10; i++) unchecked(OUT[i] = nan);
    unchecked(OUT[10] = 0);
    return;
  }
  const norm = unchecked(S[0]) * Math.pow(T / 2, 1.5);
  unchecked(OUT[2] = ixx); unchecked(OUT[3] = iyy); unchecked(OUT[4] = ixy);
  unchecked(OUT[5] = (ixx - iyy) / T); unchecked(OUT[6] = (2 * ixy) / T);
  unchecked(OUT[7] = 2 * unchecked(S[0]));
  unchecked(OUT[8] = unchecked(S[6]) / norm); unchecked(OUT[9] = unchecked(S[7]) / norm);
  unchecked(OUT[10] = 1);
}

/** adaptiveMoments(STAMP, w, h, x0, y0, sigma0) of ../moments.ts; results in OUT[0..12). */
export function moments(w: i32, h: i32, x0: f64, y0: f64, sigma0: f64): void {
  let xc = x0, yc = y0;
  const s0 = isFinite(sigma0) && sigma0 > 0.3 ? sigma0 : 1.5;
  let wxx = s0 * s0, wyy = s0 * s0, wxy: f64 = 0;
  const mw = <f64>max(w, h);
  const maxVar = 0.25 * mw * mw;
  let converged = false;
  let it: i32 = 0;
  let ok = true;
  for (; it < MAX_ITER; it++) {
    if (!pass(w, h, xc, yc, wxx, wyy, wxy, false) || !(unchecked(S[0]) > 0) || unchecked(S[8]) < 4) { ok = false; break; }
    const m0 = unchecked(S[0]);
    const mux = unchecked(S[1]) / m0, muy = unchecked(S[2]) / m0;
    const mxx = unchecked(S[3]) / m0 - mux * mux, myy = unchecked(S[4]) / m0 - muy * muy, mxy = unchecked(S[5]) / m0 - mux * muy;
    const mdet = mxx * myy - mxy * mxy;
    if (!(mxx > 0 && myy > 0 && mdet > 0)) { ok = false; break; }
    const wdet = wxx * wyy - wxy * wxy;
    const pa = myy / mdet - wyy / wdet, pb = -mxy / mdet + wxy / wdet, pc = mxx / mdet - wxx / wdet;
    const pdet = pa * pc - pb * pb;
    let nxx: f64, nyy: f64, nxy: f64, dx: f64, dy: f64;
    const tr0 = wxx + wyy;
    let useNewton = pa > 0 && pc > 0 && pdet > 0;
    if (useNewton) {
      nxx = pc / pdet; nyy = pa / pdet; nxy = -pb / pdet;
      const tr = nxx + nyy;
      if (!(tr < 3 * tr0 && tr > tr0 / 3)) useNewton = false;
      const ia = myy / mdet, ib = -mxy / mdet, ic = mxx / mdet;
      const ux = ia * mux + ib * muy, uy = ib * mux + ic * muy;
      dx = nxx * ux + nxy * uy; dy = nxy * ux + nyy * uy;
    } else {
      nxx = 0; nyy = 0; nxy = 0; dx = 0; dy = 0;
    }
    if (!useNewton) {
      nxx = 2 * mxx; nyy = 2 * myy; nxy = 2 * mxy;
      dx = 2 * mux; dy = 2 * muy;
    }
    const stepMax = Math.sqrt(tr0);
    const sl = Math.hypot(dx, dy);
    if (sl > stepMax) { dx *= stepMax / sl; dy *= stepMax / sl; }
    if (nxx + nyy > 2 * maxVar) { ok = false; break; }
    const change = Math.abs(nxx - wxx) + Math.abs(nyy - wyy) + 2 * Math.abs(nxy - wxy);
    xc += dx; yc += dy;
    wxx = nxx; wyy = nyy; wxy = nxy;
    if (!(xc > -0.5 && xc < <f64>w - 0.5 && yc > -0.5 && yc < <f64>h - 0.5)) { ok = false; break; }
    if (Math.abs(dx) < 1e-4 && Math.abs(dy) < 1e-4 && change < 1e-5 * (wxx + wyy)) { converged = true; it++; break; }
  }
  const nan: f64 = NaN;
  unchecked(OUT[11] = <f64>it);
  if (!ok || !pass(w, h, xc, yc, wxx, wyy, wxy, true) || !(unchecked(S[0]) > 0)) {
    unchecked(OUT[0] = ok ? xc : nan); unchecked(OUT[1] = ok ? yc : nan);
    for (let i = 2; i < 10; i++) unchecked(OUT[i] = nan);
    unchecked(OUT[10] = 0);
    return;
  }
  const edge = Math.min(Math.min(xc + 0.5, <f64>w - 0.5 - xc), Math.min(yc + 0.5, <f64>h - 0.5 - yc));
  if (4 * Math.max(wxx, wyy) > edge * edge) converged = false;
  const T = wxx + wyy;
  const norm = unchecked(S[0]) * Math.pow(T / 2, 1.5);
  unchecked(OUT[0] = xc); unchecked(OUT[1] = yc);
  unchecked(OUT[2] = wxx); unchecked(OUT[3] = wyy); unchecked(OUT[4] = wxy);
  unchecked(OUT[5] = (wxx - wyy) / T); unchecked(OUT[6] = (2 * wxy) / T);
  unchecked(OUT[7] = 2 * unchecked(S[0]));
  unchecked(OUT[8] = unchecked(S[6]) / norm); unchecked(OUT[9] = unchecked(S[7]) / norm);
  unchecked(OUT[10] = converged ? 1 : 0);
}

/**
 * adaptiveMomentErrors of ../moments.ts for the moments (mx, my, ixx, iyy, ixy) on STAMP, with
 * the variance VARI (varMode 2) or the constant constVar (varMode 1); results in OUT[12..16).
 */
export function momentErrors(w: i32, h: i32, varMode: i32, constVar: f64, mx: f64, my: f64, ixx: f64, iyy: f64, ixy: f64): void {
  const nan: f64 = NaN;
  for (let i = 12; i < 16; i++) unchecked(OUT[i] = nan);
  const det = ixx * iyy - ixy * ixy;
  if (!(det > 0) || !isFinite(mx) || !isFinite(my)) return;
  if (!gaussianWeights(w, h, mx, my, iyy / det, -ixy / det, ixx / det, ixx, iyy)) return;
  let s0: f64 = 0, sxx: f64 = 0, syy: f64 = 0, sxy: f64 = 0;
  for (let y = BY0; y <= BY1; y++) {
    const dy = <f64>y - my;
    for (let x = BX0; x <= BX1; x++) {
      const v = <f64>unchecked(STAMP[y * w + x]);
      const g = unchecked(WGT[y * w + x]);
      if (v != v || g == 0) continue;
      const dx = <f64>x - mx;
      const wi = g * v;
      s0 += wi; sxx += wi * dx * dx; syy += wi * dy * dy; sxy += wi * dx * dy;
    }
  }
  const T = sxx + syy;
  if (!(s0 > 0) || !(T > 0)) return;
  const e1 = (sxx - syy) / T, e2 = (2 * sxy) / T;
  let vx: f64 = 0, vy: f64 = 0, v1: f64 = 0, v2: f64 = 0;
  for (let y = BY0; y <= BY1; y++) {
    const dy = <f64>y - my;
    for (let x = BX0; x <= BX1; x++) {
      const i = y * w + x;
      const v = <f64>unchecked(STAMP[i]);
      const g = unchecked(WGT[i]);
      if (v != v || g == 0) continue;
      const s2 = varMode == 1 ? constVar : <f64>unchecked(VARI[i]);
      if (!(s2 > 0) || !isFinite(s2)) continue;
      const dx = <f64>x - mx;
      const w2s = g * g * s2;
      vx += w2s * dx * dx; vy += w2s * dy * dy;
      const r2 = dx * dx + dy * dy;
      const d1 = dx * dx - dy * dy - e1 * r2, d2 = 2 * dx * dy - e2 * r2;
      v1 += w2s * d1 * d1; v2 += w2s * d2 * d2;
    }
  }
  unchecked(OUT[12] = (2 * Math.sqrt(vx)) / s0);
  unchecked(OUT[13] = (2 * Math.sqrt(vy)) / s0);
  unchecked(OUT[14] = (2 * Math.sqrt(v1)) / T);
  unchecked(OUT[15] = (2 * Math.sqrt(v2)) / T);
}
