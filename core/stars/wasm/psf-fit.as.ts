// AssemblyScript source of the PSF fit's Levenberg-Marquardt core, compiled to WebAssembly by
// `npm run build:wasm` (asc, the AssemblyScript compiler, a dev dependency) into
// psf-fit.wasm.ts. It is the same algorithm, line for line, as fitPsfWithSnr's loop in
// ../psf-fit.ts (models, Jacobians, damping, stopping, bounds: see the comments there); that
// TypeScript version stays the reference, and test/unit/stars-psf-fit-wasm.test.ts checks that
// both give the same fits, and test/unit/wasm-modules.test.ts that the compiled bytes match this
// source.
// Why: WebAssembly is compiled once, up front; the same code as JavaScript spends about 1 s of
// CPU per worker thread in the JIT before it runs at full speed, and its exp/log cost more.

const CAP: i32 = 16384; // pixels of the largest stamp handled here (128 x 128)
const LN2: f64 = 0.6931471805599453;
const G_MIN: f64 = 1.0 / 20.0;
const G_MAX: f64 = 1.0 / 1.2;

const STAMP = new StaticArray<f32>(CAP);
const VARI = new StaticArray<f32>(CAP);
// one spare element each: the SIMD loop reads pixel pairs, the pair of a row's last pixel one past it
const DAT = new StaticArray<f64>(CAP + 2);
const WT = new StaticArray<f64>(CAP + 2);
const PROF = new StaticArray<f64>(CAP + 2);
const LNU = new StaticArray<f64>(CAP + 2);
const IU = new StaticArray<f64>(CAP + 2);
const COLT = new StaticArray<f64>(CAP);
const H = new StaticArray<f64>(64);
const G = new StaticArray<f64>(8);
const A = new StaticArray<f64>(64);
const P = new StaticArray<f64>(8);
const PT = new StaticArray<f64>(8);
const DELTA = new StaticArray<f64>(8);
const COV = new StaticArray<f64>(64);
const UNIT = new StaticArray<f64>(8);
// results: P[0..8), H[8..72) (m x m, row-major), chi2, iterations, converged, pixels, snr
const OUT = new StaticArray<f64>(80);

// Gauss-Legendre nodes and weights on a pixel (../psf-fit.ts setNodes); NN of them, 0: point model
const NT = new StaticArray<f64>(4);
const NW = new StaticArray<f64>(4);
let NN: i32 = 0;
const JP = new StaticArray<f64>(8); // one pixel's Jacobian (integrated model)

function setNodes(n: i32): void {
  NN = n == 3 || n == 4 ? n : 0;
  if (n == 3) {
    const t = 0.5 * Math.sqrt(0.6);
    unchecked(NT[0] = -t); unchecked(NT[1] = 0); unchecked(NT[2] = t);
    unchecked(NW[0] = 5.0 / 18.0); unchecked(NW[1] = 8.0 / 18.0); unchecked(NW[2] = 5.0 / 18.0);
  } else if (n == 4) {
    unchecked(NT[0] = -0.4305681557970263); unchecked(NT[1] = -0.1699905217924281); unchecked(NT[2] = 0.1699905217924281); unchecked(NT[3] = 0.4305681557970263);
    unchecked(NW[0] = 0.1739274225687269); unchecked(NW[1] = 0.3260725774312731); unchecked(NW[2] = 0.3260725774312731); unchecked(NW[3] = 0.1739274225687269);
  }
}

let GW: i32 = 0;
let BX0: i32 = 0, BX1: i32 = -1, BY0: i32 = 0, BY1: i32 = -1;
let HM: i32 = 7;

export function capacity(): i32 { return CAP; }
export function stampPtr(): usize { return changetype<usize>(STAMP); }
export function variancePtr(): usize { return changetype<usize>(VARI); }
export function outPtr(): usize { return changetype<usize>(OUT); }

function validShape(p: StaticArray<f64>, moffat: bool, w: i32, h: i32): bool {
  const a = unchecked(p[4]), b = unchecked(p[5]), c = unchecked(p[6]);
  if (!(a > 0 && c > 0 && a * c - b * b > 1e-12 * a * c)) return false;
  const x = unchecked(p[0]), y = unchecked(p[1]);
  if (!(x > -1 && x < <f64>w && y > -1 && y < <f64>h)) return false;
  if (moffat && !(unchecked(p[7]) >= G_MIN && unchecked(p[7]) <= G_MAX)) return false;
  return isFinite(unchecked(p[2])) && isFinite(unchecked(p[3]));
}

@inline function hsum(v: v128): f64 { return f64x2.extract_lane(v, 0) + f64x2.extract_lane(v, 1); }

/** Stores the Gaussian profile e at pixel k and returns the pixel's weighted squared residual. */
@inline function gaussPixel(k: i32, e: f64, bg: f64, amp: f64): f64 {
  unchecked(PROF[k] = e);
  const wk = unchecked(WT[k]);
  if (wk == 0) return 0;
  const r = unchecked(DAT[k]) - bg - amp * e;
  return wk * r * r;
}

// node values of the integrated model per box pixel and node (../psf-fit.ts chi2AtIntegrated)
const NODE_CAP: i32 = 65536;
const NE = new StaticArray<f64>(NODE_CAP);
const NLU = new StaticArray<f64>(NODE_CAP);
const NIU = new StaticArray<f64>(NODE_CAP);
const CXN = new StaticArray<f64>(4 * 1024);
const XN = new StaticArray<f64>(4);

/** chi2At for the pixel-integrated model (../psf-fit.ts chi2AtIntegrated). */
function chi2AtIntegrated(p: StaticArray<f64>, moffat: bool): f64 {
  const w = GW, xa = BX0, xb = BX1, ya = BY0, yb = BY1;
  const bw = xb - xa + 1;
  const x0 = unchecked(p[0]), y0 = unchecked(p[1]), amp = unchecked(p[2]), bg = unchecked(p[3]);
  const a = unchecked(p[4]), b2 = 2 * unchecked(p[5]), c = unchecked(p[6]);
  const nn = NN, n2 = nn * nn;
  let chi2: f64 = 0;
  if (moffat) {
    const mb = -1 / unchecked(p[7]);
    const kh = Math.pow(2, unchecked(p[7])) - 1;
    for (let y = ya; y <= yb; y++) {
      const row = y * w;
      for (let x = xa; x <= xb; x++) {
        const k = row + x;
        const wk = unchecked(WT[k]);
        if (wk == 0) { unchecked(PROF[k] = 0); continue; }
        const base = ((y - ya) * bw + (x - xa)) * n2;
        let e: f64 = 0;
        for (let j = 0; j < nn; j++) {
          const dy = <f64>y + unchecked(NT[j]) - y0;
          let ej: f64 = 0;
          for (let i = 0; i < nn; i++) {
            const dx = <f64>x + unchecked(NT[i]) - x0;
            const u = 1 + kh * (dx * (a * dx + b2 * dy) + c * dy * dy);
            const lnu = Math.log(u);
            const en = Math.exp(mb * lnu);
            const q = base + j * nn + i;
            unchecked(NE[q] = en); unchecked(NLU[q] = lnu); unchecked(NIU[q] = 1 / u);
            ej += unchecked(NW[i]) * en;
          }
          e += unchecked(NW[j]) * ej;
        }
        unchecked(PROF[k] = e);
        const r = unchecked(DAT[k]) - bg - amp * e;
        chi2 += wk * r * r;
      }
    }
    return chi2;
  }
  const ka = -LN2 * a, kc = -LN2 * c, kb = -LN2 * b2;
  const separable = Math.abs(kb) * (Math.abs(<f64>xa - x0) + Math.abs(<f64>xb - x0) + 1) * (Math.abs(<f64>ya - y0) + Math.abs(<f64>yb - y0) + 1) < 600;
  if (separable) for (let x = xa; x <= xb; x++) for (let i = 0; i < nn; i++) { const dx = <f64>x + unchecked(NT[i]) - x0; unchecked(CXN[(x - xa) * nn + i] = Math.exp(ka * dx * dx)); }
  for (let y = ya; y <= yb; y++) {
    const row = y * w;
    for (let j = 0; j < nn; j++) {
      const dy = <f64>y + unchecked(NT[j]) - y0;
      let t: f64 = 0, ratio: f64 = 0;
      if (separable) {
        t = Math.exp(kc * dy * dy + kb * (<f64>xa - x0) * dy);
        ratio = Math.exp(kb * dy);
        for (let i = 0; i < nn; i++) unchecked(XN[i] = Math.exp(kb * unchecked(NT[i]) * dy));
      }
      for (let x = xa; x <= xb; x++) {
        const k = row + x;
        if (unchecked(WT[k]) != 0) {
          const q0 = ((y - ya) * bw + (x - xa)) * n2 + j * nn;
          for (let i = 0; i < nn; i++) {
            let en: f64;
            if (separable) en = unchecked(CXN[(x - xa) * nn + i]) * t * unchecked(XN[i]);
            else { const dx = <f64>x + unchecked(NT[i]) - x0; en = Math.exp(dx * (ka * dx + kb * dy) + kc * dy * dy); }
            unchecked(NE[q0 + i] = en);
          }
        }
        t *= ratio;
      }
    }
    for (let x = xa; x <= xb; x++) {
      const k = row + x;
      const wk = unchecked(WT[k]);
      if (wk == 0) { unchecked(PROF[k] = 0); continue; }
      const base = ((y - ya) * bw + (x - xa)) * n2;
      let e: f64 = 0;
      for (let j = 0; j < nn; j++) {
        let ej: f64 = 0;
        for (let i = 0; i < nn; i++) ej += unchecked(NW[i]) * unchecked(NE[base + j * nn + i]);
        e += unchecked(NW[j]) * ej;
      }
      unchecked(PROF[k] = e);
      const r = unchecked(DAT[k]) - bg - amp * e;
      chi2 += wk * r * r;
    }
  }
  return chi2;
}

/** normalEquations for the pixel-integrated model (../psf-fit.ts normalEquationsIntegrated), scalar. */
function normalEquationsIntegrated(p: StaticArray<f64>, moffat: bool): void {
  const w = GW, xa = BX0, xb = BX1, ya = BY0, yb = BY1;
  const bw = xb - xa + 1;
  const x0 = unchecked(p[0]), y0 = unchecked(p[1]), amp = unchecked(p[2]), bg = unchecked(p[3]);
  const a = unchecked(p[4]), b = unchecked(p[5]), c = unchecked(p[6]);
  const m: i32 = moffat ? 8 : 7;
  for (let i = 0; i < 64; i++) unchecked(H[i] = 0);
  for (let i = 0; i < 8; i++) unchecked(G[i] = 0);
  const beta = moffat ? 1 / unchecked(p[7]) : 0;
  const kh = moffat ? Math.pow(2, unchecked(p[7])) - 1 : 0;
  const dkk = moffat ? (-(kh + 1) * LN2) / (beta * beta * kh) : 0;
  const qk = moffat ? 2 * amp * beta * kh : 2 * LN2 * amp;
  const nn = NN, n2 = nn * nn;
  for (let y = ya; y <= yb; y++) {
    const row = y * w;
    for (let x = xa; x <= xb; x++) {
      const k = row + x;
      const wk = unchecked(WT[k]);
      if (wk == 0) continue;
      const e = unchecked(PROF[k]);
      const r = unchecked(DAT[k]) - bg - amp * e;
      if (e < 1e-10) { unchecked(H[3 * m + 3] = unchecked(H[3 * m + 3]) + wk); unchecked(G[3] = unchecked(G[3]) + wk * r); continue; }
      const base = ((y - ya) * bw + (x - xa)) * n2;
      let j0: f64 = 0, j1: f64 = 0, j4: f64 = 0, j5: f64 = 0, j6: f64 = 0, j7: f64 = 0;
      for (let jn = 0; jn < nn; jn++) {
        const dy = <f64>y + unchecked(NT[jn]) - y0;
        for (let i = 0; i < nn; i++) {
          const dx = <f64>x + unchecked(NT[i]) - x0;
          const q = base + jn * nn + i;
          const wn = unchecked(NW[i]) * unchecked(NW[jn]);
          const en = unchecked(NE[q]);
          let wq: f64;
          if (moffat) {
            const iu = unchecked(NIU[q]);
            wq = wn * qk * en * iu;
            j7 += wn * amp * en * beta * beta * (unchecked(NLU[q]) + beta * dkk * (1 - iu));
          } else {
            wq = wn * qk * en;
          }
          j0 += wq * (a * dx + b * dy);
          j1 += wq * (b * dx + c * dy);
          j4 -= 0.5 * wq * dx * dx;
          j5 -= wq * dx * dy;
          j6 -= 0.5 * wq * dy * dy;
        }
      }
      unchecked(JP[0] = j0); unchecked(JP[1] = j1); unchecked(JP[2] = e); unchecked(JP[3] = 1);
      unchecked(JP[4] = j4); unchecked(JP[5] = j5); unchecked(JP[6] = j6); unchecked(JP[7] = j7);
      const wr = wk * r;
      for (let i = 0; i < m; i++) {
        const ji = unchecked(JP[i]);
        const wi = wk * ji;
        unchecked(G[i] = unchecked(G[i]) + wr * ji);
        for (let jj = i; jj < m; jj++) unchecked(H[i * m + jj] = unchecked(H[i * m + jj]) + wi * unchecked(JP[jj]));
      }
    }
  }
  for (let i = 0; i < m; i++) for (let jj = 0; jj < i; jj++) unchecked(H[i * m + jj] = unchecked(H[jj * m + i]));
  HM = m;
}

function chi2At(p: StaticArray<f64>, moffat: bool): f64 {
  if (NN > 0) return chi2AtIntegrated(p, moffat);
  const w = GW, xa = BX0, xb = BX1, ya = BY0, yb = BY1;
  const x0 = unchecked(p[0]), y0 = unchecked(p[1]), amp = unchecked(p[2]), bg = unchecked(p[3]);
  const a = unchecked(p[4]), b2 = 2 * unchecked(p[5]), c = unchecked(p[6]);
  let chi2: f64 = 0;
  if (moffat) {
    const mb = -1 / unchecked(p[7]);
    const kh = Math.pow(2, unchecked(p[7])) - 1;
    for (let y = ya; y <= yb; y++) {
      const dy = <f64>y - y0;
      const row = y * w;
      for (let x = xa; x <= xb; x++) {
        const k = row + x;
        const wk = unchecked(WT[k]);
        // zeros where there is no weight: the SIMD normal equations read these lanes too
        if (wk == 0) { unchecked(PROF[k] = 0); unchecked(LNU[k] = 0); unchecked(IU[k] = 0); continue; }
        const dx = <f64>x - x0;
        const u = 1 + kh * (dx * (a * dx + b2 * dy) + c * dy * dy);
        const lnu = Math.log(u);
        const e = Math.exp(mb * lnu);
        unchecked(LNU[k] = lnu);
        unchecked(IU[k] = 1 / u);
        unchecked(PROF[k] = e);
        const r = unchecked(DAT[k]) - bg - amp * e;
        chi2 += wk * r * r;
      }
    }
    return chi2;
  }
  const ka = -LN2 * a, kc = -LN2 * c, kb = -LN2 * b2;
  const separable = Math.abs(kb) * (Math.abs(<f64>xa - x0) + Math.abs(<f64>xb - x0) + 1) * (Math.abs(<f64>ya - y0) + Math.abs(<f64>yb - y0) + 1) < 600;
  if (separable) {
    for (let x = xa; x <= xb; x++) { const dx = <f64>x - x0; unchecked(COLT[x] = Math.exp(ka * dx * dx)); }
    for (let y = ya; y <= yb; y++) {
      const dy = <f64>y - y0;
      const row = y * w;
      let t = Math.exp(kc * dy * dy + kb * (<f64>xa - x0) * dy);
      const ratio = Math.exp(kb * dy);
      for (let x = xa; x <= xb; x++) {
        chi2 += gaussPixel(row + x, unchecked(COLT[x]) * t, bg, amp);
        t *= ratio;
      }
    }
    return chi2;
  }
  for (let y = ya; y <= yb; y++) {
    const dy = <f64>y - y0;
    const row = y * w;
    for (let x = xa; x <= xb; x++) {
      const dx = <f64>x - x0;
      chi2 += gaussPixel(row + x, Math.exp(dx * (ka * dx + kb * dy) + kc * dy * dy), bg, amp);
    }
  }
  return chi2;
}

@inline function setH(i: i32, j: i32, v: f64): void {
  unchecked(H[i * HM + j] = v);
  unchecked(H[j * HM + i] = v);
}

// Two pixels per instruction (128-bit SIMD, double precision): the same sums as the
// TypeScript loop, each accumulated in two lanes (even and odd columns) and added at the end.
// Pixels without weight contribute zeros; a pixel whose profile is below 1e-10 only its
// background terms, as in the TypeScript loop (its Jacobian masked to zero).

function normalEquations(p: StaticArray<f64>, moffat: bool): void {
  if (NN > 0) { normalEquationsIntegrated(p, moffat); return; }
  const w = GW, xa = BX0, xb = BX1, ya = BY0, yb = BY1;
  const x0 = unchecked(p[0]), y0 = unchecked(p[1]), amp = unchecked(p[2]), bg = unchecked(p[3]);
  const a = unchecked(p[4]), b = unchecked(p[5]), c = unchecked(p[6]);
  const Z = f64x2.splat(0);
  let h00 = Z, h01 = Z, h02 = Z, h03 = Z, h04 = Z, h05 = Z, h06 = Z;
  let h11 = Z, h12 = Z, h13 = Z, h14 = Z, h15 = Z, h16 = Z;
  let h22 = Z, h23 = Z, h24 = Z, h25 = Z, h26 = Z;
  let h33 = Z, h34 = Z, h35 = Z, h36 = Z;
  let h44 = Z, h45 = Z, h46 = Z;
  let h55 = Z, h56 = Z;
  let h66 = Z;
  let h07 = Z, h17 = Z, h27 = Z, h37 = Z, h47 = Z, h57 = Z, h67 = Z, h77 = Z;
  let g0 = Z, g1 = Z, g2 = Z, g3 = Z, g4 = Z, g5 = Z, g6 = Z, g7 = Z;
  const beta = moffat ? 1 / unchecked(p[7]) : 0;
  const kh = moffat ? Math.pow(2, unchecked(p[7])) - 1 : 0;
  const dkk = moffat ? (-(kh + 1) * LN2) / (beta * beta * kh) : 0;
  const vq = f64x2.splat(moffat ? 2 * amp * beta * kh : 2 * LN2 * amp);
  const vamp = f64x2.splat(amp), vbg = f64x2.splat(bg);
  const va = f64x2.splat(a), vb = f64x2.splat(b), vc = f64x2.splat(c);
  const vb2 = f64x2.splat(amp * beta * beta), vbd = f64x2.splat(beta * dkk);
  const vtiny = f64x2.splat(1e-10), vone = f64x2.splat(1), vhalf = f64x2.splat(-0.5);
  const wt = changetype<usize>(WT), prof = changetype<usize>(PROF), dat = changetype<usize>(DAT);
  const lnuP = changetype<usize>(LNU), iuP = changetype<usize>(IU);
  for (let y = ya; y <= yb; y++) {
    const dy = <f64>y - y0;
    const vdy = f64x2.splat(dy);
    const row = y * w;
    for (let x = xa; x <= xb; x += 2) {
      const off = <usize>(row + x) << 3;
      let wk = v128.load(wt + off);
      if (x == xb) wk = f64x2.replace_lane(wk, 1, 0);
      if (!v128.any_true(wk)) continue;
      const e = v128.load(prof + off);
      const r = f64x2.sub(f64x2.sub(v128.load(dat + off), vbg), f64x2.mul(vamp, e));
      const keep = f64x2.ge(e, vtiny);
      const dx = f64x2.sub(f64x2(<f64>x, <f64>(x + 1)), f64x2.splat(x0));
      let q = f64x2.mul(vq, e);
      let j7 = Z;
      if (moffat) {
        const iu = v128.load(iuP + off);
        q = f64x2.mul(q, iu);
        j7 = v128.and(f64x2.mul(f64x2.mul(vb2, e), f64x2.add(v128.load(lnuP + off), f64x2.mul(vbd, f64x2.sub(vone, iu)))), keep);
      }
      q = v128.and(q, keep);
      const j0 = f64x2.mul(q, f64x2.add(f64x2.mul(va, dx), f64x2.mul(vb, vdy)));
      const j1 = f64x2.mul(q, f64x2.add(f64x2.mul(vb, dx), f64x2.mul(vc, vdy)));
      const j2 = v128.and(e, keep);
      const j4 = f64x2.mul(f64x2.mul(vhalf, q), f64x2.mul(dx, dx));
      const j5 = f64x2.neg(f64x2.mul(f64x2.mul(q, dx), vdy));
      const j6 = f64x2.mul(f64x2.mul(vhalf, q), f64x2.mul(vdy, vdy));
      const w0 = f64x2.mul(wk, j0), w1 = f64x2.mul(wk, j1), w2 = f64x2.mul(wk, j2);
      const w4 = f64x2.mul(wk, j4), w5 = f64x2.mul(wk, j5), w6 = f64x2.mul(wk, j6);
      h00 = f64x2.add(h00, f64x2.mul(w0, j0)); h01 = f64x2.add(h01, f64x2.mul(w0, j1)); h02 = f64x2.add(h02, f64x2.mul(w0, j2));
      h03 = f64x2.add(h03, w0); h04 = f64x2.add(h04, f64x2.mul(w0, j4)); h05 = f64x2.add(h05, f64x2.mul(w0, j5)); h06 = f64x2.add(h06, f64x2.mul(w0, j6));
      h11 = f64x2.add(h11, f64x2.mul(w1, j1)); h12 = f64x2.add(h12, f64x2.mul(w1, j2)); h13 = f64x2.add(h13, w1);
      h14 = f64x2.add(h14, f64x2.mul(w1, j4)); h15 = f64x2.add(h15, f64x2.mul(w1, j5)); h16 = f64x2.add(h16, f64x2.mul(w1, j6));
      h22 = f64x2.add(h22, f64x2.mul(w2, j2)); h23 = f64x2.add(h23, w2); h24 = f64x2.add(h24, f64x2.mul(w2, j4));
      h25 = f64x2.add(h25, f64x2.mul(w2, j5)); h26 = f64x2.add(h26, f64x2.mul(w2, j6));
      h33 = f64x2.add(h33, wk); h34 = f64x2.add(h34, w4); h35 = f64x2.add(h35, w5); h36 = f64x2.add(h36, w6);
      h44 = f64x2.add(h44, f64x2.mul(w4, j4)); h45 = f64x2.add(h45, f64x2.mul(w4, j5)); h46 = f64x2.add(h46, f64x2.mul(w4, j6));
      h55 = f64x2.add(h55, f64x2.mul(w5, j5)); h56 = f64x2.add(h56, f64x2.mul(w5, j6));
      h66 = f64x2.add(h66, f64x2.mul(w6, j6));
      const wr = f64x2.mul(wk, r);
      g0 = f64x2.add(g0, f64x2.mul(wr, j0)); g1 = f64x2.add(g1, f64x2.mul(wr, j1)); g2 = f64x2.add(g2, f64x2.mul(wr, j2));
      g3 = f64x2.add(g3, wr); g4 = f64x2.add(g4, f64x2.mul(wr, j4)); g5 = f64x2.add(g5, f64x2.mul(wr, j5)); g6 = f64x2.add(g6, f64x2.mul(wr, j6));
      if (moffat) {
        const w7 = f64x2.mul(wk, j7);
        h07 = f64x2.add(h07, f64x2.mul(w0, j7)); h17 = f64x2.add(h17, f64x2.mul(w1, j7)); h27 = f64x2.add(h27, f64x2.mul(w2, j7));
        h37 = f64x2.add(h37, w7); h47 = f64x2.add(h47, f64x2.mul(w4, j7)); h57 = f64x2.add(h57, f64x2.mul(w5, j7));
        h67 = f64x2.add(h67, f64x2.mul(w6, j7)); h77 = f64x2.add(h77, f64x2.mul(w7, j7));
        g7 = f64x2.add(g7, f64x2.mul(wr, j7));
      }
    }
  }
  HM = moffat ? 8 : 7;
  setH(0, 0, hsum(h00)); setH(0, 1, hsum(h01)); setH(0, 2, hsum(h02)); setH(0, 3, hsum(h03)); setH(0, 4, hsum(h04)); setH(0, 5, hsum(h05)); setH(0, 6, hsum(h06));
  setH(1, 1, hsum(h11)); setH(1, 2, hsum(h12)); setH(1, 3, hsum(h13)); setH(1, 4, hsum(h14)); setH(1, 5, hsum(h15)); setH(1, 6, hsum(h16));
  setH(2, 2, hsum(h22)); setH(2, 3, hsum(h23)); setH(2, 4, hsum(h24)); setH(2, 5, hsum(h25)); setH(2, 6, hsum(h26));
  setH(3, 3, hsum(h33)); setH(3, 4, hsum(h34)); setH(3, 5, hsum(h35)); setH(3, 6, hsum(h36));
  setH(4, 4, hsum(h44)); setH(4, 5, hsum(h45)); setH(4, 6, hsum(h46));
  setH(5, 5, hsum(h55)); setH(5, 6, hsum(h56));
  setH(6, 6, hsum(h66));
  unchecked(G[0] = hsum(g0)); unchecked(G[1] = hsum(g1)); unchecked(G[2] = hsum(g2)); unchecked(G[3] = hsum(g3));
  unchecked(G[4] = hsum(g4)); unchecked(G[5] = hsum(g5)); unchecked(G[6] = hsum(g6));
  if (moffat) {
    setH(0, 7, hsum(h07)); setH(1, 7, hsum(h17)); setH(2, 7, hsum(h27)); setH(3, 7, hsum(h37)); setH(4, 7, hsum(h47)); setH(5, 7, hsum(h57)); setH(6, 7, hsum(h67)); setH(7, 7, hsum(h77));
    unchecked(G[7] = hsum(g7));
  }
}

function cholesky(m: i32): bool {
  for (let j = 0; j < m; j++) {
    let d = unchecked(A[j * m + j]);
    for (let k = 0; k < j; k++) d -= unchecked(A[j * m + k]) * unchecked(A[j * m + k]);
    if (!(d > 0)) return false;
    const l = Math.sqrt(d);
    unchecked(A[j * m + j] = l);
    for (let i = j + 1; i < m; i++) {
      let v = unchecked(A[i * m + j]);
      for (let k = 0; k < j; k++) v -= unchecked(A[i * m + k]) * unchecked(A[j * m + k]);
      unchecked(A[i * m + j] = v / l);
    }
  }
  return true;
}

function cholSolve(m: i32, out: StaticArray<f64>): void {
  for (let i = 0; i < m; i++) {
    let v = unchecked(out[i]);
    for (let k = 0; k < i; k++) v -= unchecked(A[i * m + k]) * unchecked(out[k]);
    unchecked(out[i] = v / unchecked(A[i * m + i]));
  }
  for (let i = m - 1; i >= 0; i--) {
    let v = unchecked(out[i]);
    for (let k = i + 1; k < m; k++) v -= unchecked(A[k * m + i]) * unchecked(out[k]);
    unchecked(out[i] = v / unchecked(A[i * m + i]));
  }
}

function solveStep(m: i32, lambda: f64, frozen: i32): bool {
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < m; j++) unchecked(A[i * m + j] = unchecked(H[i * m + j]));
    const d = unchecked(H[i * m + i]);
    unchecked(A[i * m + i] = d + lambda * (d > 0 ? d : 1e-30) + 1e-300);
    unchecked(DELTA[i] = unchecked(G[i]));
  }
  if (frozen >= 0) {
    for (let j = 0; j < m; j++) { unchecked(A[frozen * m + j] = 0); unchecked(A[j * m + frozen] = 0); }
    unchecked(A[frozen * m + frozen] = 1);
    unchecked(DELTA[frozen] = 0);
  }
  if (!cholesky(m)) return false;
  cholSolve(m, DELTA);
  for (let i = 0; i < m; i++) if (!isFinite(unchecked(DELTA[i]))) return false;
  return true;
}

/**
 * The fit of ../psf-fit.ts fitPsfWithSnr from its start values (the caller fills in missing
 * amplitude and background first). Stamp and variance in STAMP / VARI; constVar >= 0 means a
 * constant variance, < 0 the per-pixel one; nodes 3 or 4: the pixel-integrated model with that
 * many Gauss-Legendre points per axis, otherwise the model at pixel centres. Returns 0 when the
 * fit ran (results in OUT), 1 when it could not start (P in OUT, pixel count in OUT[75]).
 */
export function fit(w: i32, h: i32, moffat: bool, maxIter: i32, radius: f64, constVar: f64,
  ix: f64, iy: f64, ixx: f64, iyy: f64, ixy: f64, amp: f64, bg: f64, nodes: i32): i32 {
  const m: i32 = moffat ? 8 : 7;
  GW = w;
  setNodes(nodes);
  const r2max = radius > 0 ? radius * radius : Infinity;
  const rw = Math.sqrt(r2max);
  const fin = isFinite(rw);
  const ya: i32 = fin ? <i32>Math.max(0, Math.floor(iy - rw)) : 0, yb: i32 = fin ? <i32>Math.min(<f64>(h - 1), Math.ceil(iy + rw)) : h - 1;
  const xa: i32 = fin ? <i32>Math.max(0, Math.floor(ix - rw)) : 0, xb: i32 = fin ? <i32>Math.min(<f64>(w - 1), Math.ceil(ix + rw)) : w - 1;
  BX0 = xa; BX1 = xb; BY0 = ya; BY1 = yb;
  if ((xb - xa + 1) * (yb - ya + 1) * NN * NN > NODE_CAP || (xb - xa + 1) * NN > 4 * 1024) NN = 0; // as ../psf-fit.ts
  let n: i32 = 0;
  for (let y = ya; y <= yb; y++) {
    const dy2 = (<f64>y - iy) * (<f64>y - iy);
    for (let x = xa; x <= xb; x++) {
      const i = y * w + x;
      const v = <f64>unchecked(STAMP[i]);
      const s2 = constVar >= 0 ? constVar : <f64>unchecked(VARI[i]);
      const out = (<f64>x - ix) * (<f64>x - ix) + dy2 > r2max;
      if (out || !isFinite(v) || !(s2 > 0) || !isFinite(s2)) { unchecked(DAT[i] = 0); unchecked(WT[i] = 0); continue; }
      unchecked(DAT[i] = v); unchecked(WT[i] = 1 / s2);
      n++;
    }
  }
  const det = ixx * iyy - ixy * ixy;
  const scale = 1 / (2 * LN2);
  unchecked(P[0] = ix); unchecked(P[1] = iy);
  unchecked(P[4] = (iyy / det) * scale); unchecked(P[5] = (-ixy / det) * scale); unchecked(P[6] = (ixx / det) * scale);
  unchecked(P[7] = moffat ? 1.0 / 4.0 : 0);
  unchecked(P[3] = bg);
  unchecked(P[2] = amp);
  unchecked(OUT[75] = <f64>n);
  if (n <= m || !validShape(P, moffat, w, h) || !(det > 0)) { copyP(); return 1; }
  let chi2 = chi2At(P, moffat);
  if (!isFinite(chi2)) { copyP(); return 1; }
  normalEquations(P, moffat);
  const dof = <f64>(n - m);
  let lambda: f64 = 1e-3;
  let nu: f64 = 2;
  let converged = false;
  let profAtP = true;
  let iter: i32 = 0;
  for (; iter < maxIter; iter++) {
    const tol = 1e-3 * Math.max(chi2 / dof, 1e-300);
    let frozen: i32 = -1;
    if (moffat) {
      if (!solveStep(m, lambda, -1)) { lambda *= nu; nu *= 2; if (lambda > 1e12) break; continue; }
      const gt = unchecked(P[7]) + unchecked(DELTA[7]);
      if ((unchecked(P[7]) <= G_MIN && gt < G_MIN) || (unchecked(P[7]) >= G_MAX && gt > G_MAX)) frozen = 7;
    }
    if (frozen >= 0 || !moffat) {
      if (!solveStep(m, lambda, frozen)) { lambda *= nu; nu *= 2; if (lambda > 1e12) break; continue; }
    }
    let pred: f64 = 0;
    for (let i = 0; i < m; i++) {
      unchecked(PT[i] = unchecked(P[i]) + unchecked(DELTA[i]));
      const d = unchecked(H[i * m + i]);
      pred += unchecked(DELTA[i]) * (unchecked(G[i]) + lambda * (d > 0 ? d : 1e-30) * unchecked(DELTA[i]));
    }
    if (moffat) unchecked(PT[7] = Math.min(G_MAX, Math.max(G_MIN, unchecked(PT[7]))));
    const ok = validShape(PT, moffat, w, h);
    const chi2t = ok ? chi2At(PT, moffat) : Infinity;
    if (ok) profAtP = false;
    if (chi2t < chi2) {
      const rho = (chi2 - chi2t) / Math.max(pred, 1e-300);
      for (let i = 0; i < m; i++) unchecked(P[i] = unchecked(PT[i]));
      const drop = chi2 - chi2t;
      chi2 = chi2t;
      profAtP = true;
      if (pred < tol && drop < tol) { converged = true; iter++; break; }
      normalEquations(P, moffat);
      const t = 2 * rho - 1;
      lambda *= Math.max(1.0 / 3.0, 1 - t * t * t);
      if (lambda < 1e-12) lambda = 1e-12;
      nu = 2;
    } else {
      if (pred < tol) { converged = true; iter++; break; }
      lambda *= nu;
      nu *= 2;
      if (lambda > 1e12) break;
    }
  }
  if (!converged && solveStep(m, 0, -1)) {
    let pred: f64 = 0;
    for (let i = 0; i < m; i++) pred += unchecked(DELTA[i]) * unchecked(G[i]);
    if (pred < 1e-4 * Math.max(chi2 / dof, 1e-300)) converged = true;
  }
  if (!profAtP) chi2At(P, moffat);
  let s2: f64 = 0;
  const amp2 = unchecked(P[2]) * unchecked(P[2]);
  for (let y = ya; y <= yb; y++) for (let k = y * w + xa; k <= y * w + xb; k++) s2 += unchecked(WT[k]) * amp2 * unchecked(PROF[k]) * unchecked(PROF[k]);
  copyP();
  for (let i = 0; i < m * m; i++) unchecked(OUT[8 + i] = unchecked(H[i]));
  unchecked(OUT[72] = chi2);
  unchecked(OUT[73] = <f64>iter);
  unchecked(OUT[74] = converged ? 1 : 0);
  unchecked(OUT[76] = Math.sqrt(s2));
  return 0;
}

function copyP(): void {
  for (let i = 0; i < 8; i++) unchecked(OUT[i] = unchecked(P[i]));
}

/**
 * After fit(): the parameter covariance (J^T W J)^-1 of the last normal equations, times
 * scale, row-major m x m at the returned address; 0 when they are not positive definite
 * (the covariance step of ../psf-fit.ts finish, for the per-star kernel in measure.as.ts).
 */
export function covariance(m: i32, scale: f64): usize {
  for (let i = 0; i < m * m; i++) unchecked(A[i] = unchecked(H[i]));
  if (!cholesky(m)) return 0;
  for (let j = 0; j < m; j++) {
    for (let i = 0; i < m; i++) unchecked(UNIT[i] = i == j ? 1 : 0);
    cholSolve(m, UNIT);
    for (let i = 0; i < m; i++) unchecked(COV[i * m + j] = unchecked(UNIT[i]));
  }
  for (let i = 0; i < m * m; i++) unchecked(COV[i] = unchecked(COV[i]) * scale);
  return changetype<usize>(COV);
}
