/**
 * The defocus model of the size field (optics.md section 4): second-moment sizes add, so
 *   T = T0 + q^2,  q = a0 + a1 u + a2 v + a3 (u^2 + v^2),  q = sqrt(K) delta,
 * with delta the local focus error and (u, v) field coordinates about the optical centre in
 * half-diagonals. q^2 is quadratic in the parameters, and (a0..a3) and its negative fit
 * equally: one frame gives |delta| only. Fitted by Levenberg-Marquardt from many starts (the
 * surface is V-shaped where best focus crosses the frame), with robust reweighting.
 * A focus pair adds a second frame with q + s (s = sqrt(K) * step), which fixes the sign.
 * Astigmatism (optional, pairs): the blur ellipse's semi-axes go as |delta -+ z/2| (z = S-T focal
 * separation), so the second moments add K (delta^2 + (z/2)^2): the size term becomes
 * q^2 + (a4 r^2)^2 with a4 r^2 = sqrt(K) z / 2, z growing as r^2 (optics.md section 3); it is the
 * same in both frames of a pair and blind to its own sign.
 */
import { levenbergMarquardt, robustLinearFit, type LmProblem } from '../field/lsq.ts';
import { defocusGain, defocusTable, gainAt } from '../field/coma-calibration.ts';
import { median } from '../field/stats.ts';
import { medianOf } from '../field/lsq.ts';

export interface DefocusData {
  readonly n: number;
  readonly u: Float64Array;
  readonly v: Float64Array;
  readonly T: Float64Array;
  readonly sig: Float64Array;
  /** 0 = first (or only) frame, 1 = the frame shifted by the focus step. */
  readonly frame: Uint8Array | null;
  /** Central obstruction of the pupil (shape of the defocus disk); default 0. */
  readonly eps?: number;
  /** Moffat power index of the seeing core (null or absent: a Gaussian core); sets the adaptive gain H. */
  readonly beta?: number | null;
}

/**
 * Size of a star with core T0 and unweighted defocus term q^2, as the adaptive moments see it:
 * T0 + q^2 H(2 q^2 / T0) (field/coma-calibration.ts; H = 1 for unweighted moments).
 */
export function modelT(T0: number, q: number, eps = 0, beta: number | null = null): number {
  const q2 = q * q;
  return T0 + q2 * defocusGain((2 * q2) / Math.max(T0, 1e-9), eps, beta).H;
}

/** Full parameter vector: [T0, T0b, a0, a1, a2, a3, s, a4]. T0b and s are used only for pairs, a4 (astigmatism) when asked for. */
export const P = { T0: 0, T0b: 1, a0: 2, a1: 3, a2: 4, a3: 5, s: 6, a4: 7 } as const;
export const NPAR = 8;

export interface DefocusSpec {
  tilt: boolean;
  curvature: boolean;
  /** Pair fits: the step in q units, or null to fit it (then the sign of the step is taken as known, s > 0). */
  pair: { stepQ: number | null } | null;
  /** Fit the astigmatic size term (a4 r^2)^2 (default false). */
  astigmatism?: boolean;
}

export interface DefocusFit {
  readonly params: Float64Array;
  /** Covariance of the full parameter vector (zeros for fixed parameters), scaled by max(1, chi2/dof). */
  readonly cov: Float64Array;
  readonly chi2: number;
  readonly dof: number;
  readonly scatter: number;
  readonly robust: Float64Array;
}

function activeIndices(spec: DefocusSpec): number[] {
  const a: number[] = [P.T0, P.a0];
  if (spec.pair) a.push(P.T0b);
  if (spec.tilt) a.push(P.a1, P.a2);
  if (spec.curvature) a.push(P.a3);
  if (spec.pair && spec.pair.stepQ === null) a.push(P.s);
  if (spec.astigmatism) a.push(P.a4);
  return a.sort((x, y) => x - y);
}

function qOf(p: ArrayLike<number>, u: number, v: number): number {
  return p[P.a0] + p[P.a1] * u + p[P.a2] * v + p[P.a3] * (u * u + v * v);
}

/** The astigmatic share of the size term, (a4 r^2)^2 (0 when a4 is absent). */
function astigOf(p: ArrayLike<number>, u: number, v: number): number {
  const a4 = p[P.a4] ?? 0;
  if (!a4) return 0;
  const r2 = u * u + v * v;
  return a4 * a4 * r2 * r2;
}

function problem(d: DefocusData, w: Float64Array, active: number[], base: Float64Array): LmProblem {
  const full = Float64Array.from(base);
  const col = new Int8Array(NPAR).fill(-1);
  active.forEach((k, j) => (col[k] = j));
  const na = active.length;
  const fr = d.frame;
  const eps = d.eps ?? 0;
  const beta = d.beta ?? null;
  const table = defocusTable(eps, beta);
  const dH = new Float64Array(1);
  const jac = new Float64Array(na);
  return {
    n: d.n, y: d.T, w,
    batch(pr, M, g) {
      for (let j = 0; j < na; j++) full[active[j]] = pr[j];
      const T0 = full[P.T0], T0b = full[P.T0b], a0 = full[P.a0], a1 = full[P.a1], a2 = full[P.a2], a3 = full[P.a3], s = full[P.s], a4 = full[P.a4];
      const cT0 = col[P.T0], cT0b = col[P.T0b], c0 = col[P.a0], c1 = col[P.a1], c2 = col[P.a2], c3 = col[P.a3], cs = col[P.s], c4 = col[P.a4];
      let chi2 = 0;
      // the single-frame fit with tilt and curvature (T0, a0, a1, a2, a3): the normal equations
      // in scalars, the same sums as the general loop below in a third of its time
      if (!fr && M && g && na === 5 && cT0 === 0 && c0 === 1 && c1 === 2 && c2 === 3 && c3 === 4 && a4 === 0) {
        let m00 = 0, m10 = 0, m11 = 0, m20 = 0, m21 = 0, m22 = 0, m30 = 0, m31 = 0, m32 = 0, m33 = 0;
        let m40 = 0, m41 = 0, m42 = 0, m43 = 0, m44 = 0, g0 = 0, g1 = 0, g2 = 0, g3 = 0, g4 = 0;
        const t0 = Math.max(T0, 1e-9);
        for (let i = 0; i < d.n; i++) {
          const wi = w[i];
          if (!(wi > 0)) continue;
          const u = d.u[i];
          const v = d.v[i];
          const r2 = u * u + v * v;
          const q = a0 + a1 * u + a2 * v + a3 * r2;
          const y = (2 * q * q) / t0;
          const H = gainAt(table, y, dH);
          const res = d.T[i] - (t0 + q * q * H);
          chi2 += wi * res * res;
          const q2 = 2 * q * (H + y * dH[0]);
          const j0 = 1 - 0.5 * y * y * dH[0], j1 = q2, j2 = q2 * u, j3 = q2 * v, j4 = q2 * r2;
          const w0 = j0 * wi, w1 = j1 * wi, w2 = j2 * wi, w3 = j3 * wi, w4 = j4 * wi;
          g0 += w0 * res; g1 += w1 * res; g2 += w2 * res; g3 += w3 * res; g4 += w4 * res;
          m00 += w0 * j0;
          m10 += w1 * j0; m11 += w1 * j1;
          m20 += w2 * j0; m21 += w2 * j1; m22 += w2 * j2;
          m30 += w3 * j0; m31 += w3 * j1; m32 += w3 * j2; m33 += w3 * j3;
          m40 += w4 * j0; m41 += w4 * j1; m42 += w4 * j2; m43 += w4 * j3; m44 += w4 * j4;
        }
        g[0] += g0; g[1] += g1; g[2] += g2; g[3] += g3; g[4] += g4;
        M[0] += m00;
        M[5] += m10; M[6] += m11;
        M[10] += m20; M[11] += m21; M[12] += m22;
        M[15] += m30; M[16] += m31; M[17] += m32; M[18] += m33;
        M[20] += m40; M[21] += m41; M[22] += m42; M[23] += m43; M[24] += m44;
        return chi2;
      }
      for (let i = 0; i < d.n; i++) {
        const wi = w[i];
        if (!(wi > 0)) continue;
        const u = d.u[i];
        const v = d.v[i];
        const f = fr ? fr[i] : 0;
        const r2 = u * u + v * v;
        const q = a0 + a1 * u + a2 * v + a3 * r2 + (f ? s : 0);
        const z = a4 * r2;
        const Q2 = q * q + z * z;
        const t0 = Math.max(f ? T0b : T0, 1e-9);
        const y = (2 * Q2) / t0;
        const H = gainAt(table, y, dH);
        const res = d.T[i] - (t0 + Q2 * H);
        chi2 += wi * res * res;
        if (!M || !g) continue;
        jac.fill(0);
        // d/dQ2 [Q2 H(y)] = H + y H', so d/dq = 2q (H + y H'); d/dT0 = 1 - (y^2/2) H'
        const gQ = H + y * dH[0];
        const q2 = 2 * q * gQ;
        const dT0 = 1 - 0.5 * y * y * dH[0];
        if (c4 >= 0) jac[c4] = 2 * z * r2 * gQ;
        if (f) { if (cT0b >= 0) jac[cT0b] = dT0; } else if (cT0 >= 0) jac[cT0] = dT0;
        if (c0 >= 0) jac[c0] = q2;
        if (c1 >= 0) jac[c1] = q2 * u;
        if (c2 >= 0) jac[c2] = q2 * v;
        if (c3 >= 0) jac[c3] = q2 * r2;
        if (cs >= 0 && f) jac[cs] = q2;
        for (let a = 0; a < na; a++) {
          const ja = jac[a] * wi;
          if (ja === 0) continue;
          g[a] += ja * res;
          for (let b = 0; b <= a; b++) M[a * na + b] += ja * jac[b];
        }
      }
      return chi2;
    },
    model(pr, i, jac) {
      // Row form of batch() (used only by callers without batch support).
      for (let j = 0; j < active.length; j++) full[active[j]] = pr[j];
      const u = d.u[i];
      const v = d.v[i];
      const f = d.frame ? d.frame[i] : 0;
      const q = qOf(full, u, v) + (f ? full[P.s] : 0);
      const z = full[P.a4] * (u * u + v * v);
      const Q2 = q * q + z * z;
      const t0 = Math.max(f ? full[P.T0b] : full[P.T0], 1e-9);
      const y = (2 * Q2) / t0;
      const gn = defocusGain(y, eps, beta);
      if (jac) {
        jac.fill(0);
        const g = 2 * q * (gn.H + y * gn.dH);
        if (col[P.a4] >= 0) jac[col[P.a4]] = 2 * z * (u * u + v * v) * (gn.H + y * gn.dH);
        const c0 = f ? P.T0b : P.T0;
        if (col[c0] >= 0) jac[col[c0]] = 1 - 0.5 * y * y * gn.dH;
        if (col[P.a0] >= 0) jac[col[P.a0]] = g;
        if (col[P.a1] >= 0) jac[col[P.a1]] = g * u;
        if (col[P.a2] >= 0) jac[col[P.a2]] = g * v;
        if (col[P.a3] >= 0) jac[col[P.a3]] = g * (u * u + v * v);
        if (col[P.s] >= 0 && f) jac[col[P.s]] = g;
      }
      return t0 + Q2 * gn.H;
    },
  };
}

/**
 * The seeing-and-pixel core T0 cannot be below the pixel box alone, 2 x 1/12 px^2 (moments
 * include the box, optics.md 1.6); solutions below it trade an unphysical negative core for a
 * huge defocus and are refitted with T0 held at the floor.
 */
export const T0_FLOOR = 1 / 6;

function solveFrom(d: DefocusData, w: Float64Array, spec: DefocusSpec, start: Float64Array): { params: Float64Array; chi2: number; covUnit: Float64Array | null; active: number[] } {
  const r = solveActive(d, w, spec, start, activeIndices(spec));
  const low = ([P.T0, P.T0b] as number[]).filter((k) => r.active.includes(k) && r.params[k] < T0_FLOOR);
  if (low.length === 0) return r;
  const held = Float64Array.from(r.params);
  for (const k of low) held[k] = T0_FLOOR;
  return solveActive(d, w, spec, held, r.active.filter((k) => !low.includes(k)));
}

function solveActive(d: DefocusData, w: Float64Array, spec: DefocusSpec, start: Float64Array, active: number[]): { params: Float64Array; chi2: number; covUnit: Float64Array | null; active: number[] } {
  const base = Float64Array.from(start);
  if (!spec.tilt) { base[P.a1] = 0; base[P.a2] = 0; }
  if (!spec.curvature) base[P.a3] = 0;
  if (!spec.astigmatism) base[P.a4] = 0;
  if (spec.pair && spec.pair.stepQ !== null) base[P.s] = spec.pair.stepQ;
  const pr = problem(d, w, active, base);
  const r = levenbergMarquardt(pr, active.map((k) => base[k]), 60);
  const params = Float64Array.from(base);
  active.forEach((k, j) => (params[k] = r.params[j]));
  return { params, chi2: r.chi2, covUnit: r.covUnit, active };
}

/** Starting points: the V and the one-sided cases, eight tilt directions, both curvature signs. */
export function defaultStarts(d: DefocusData, spec: DefocusSpec): Float64Array[] {
  const Ts = Float64Array.from(d.T).sort();
  const lo = Ts[Math.floor(0.1 * (Ts.length - 1))];
  const hi = Ts[Math.floor(0.9 * (Ts.length - 1))];
  const amp = Math.sqrt(Math.max(hi - lo, 0.01 * median(Ts), 1e-6));
  const starts: Float64Array[] = [];
  const a0s = [0, amp / 2];
  const dirs: [number, number][] = spec.tilt ? [[0, 0], ...[0, 45, 90, 135].map((t): [number, number] => [Math.cos((t * Math.PI) / 180), Math.sin((t * Math.PI) / 180)])] : [[0, 0]];
  const a3s = spec.curvature ? [-amp / 2, 0, amp / 2] : [0];
  const steps = spec.pair ? (spec.pair.stepQ !== null ? [spec.pair.stepQ] : [amp / 2, amp, 2 * amp]) : [0];
  for (const a0 of a0s) for (const [cx, cy] of dirs) for (const a3 of a3s) for (const s of steps) {
    const p = new Float64Array(NPAR);
    p[P.a0] = a0; p[P.a1] = amp * cx; p[P.a2] = amp * cy; p[P.a3] = a3; p[P.s] = s;
    const q0 = a0;
    p[P.T0] = Math.max(0, lo - q0 * q0);
    p[P.T0b] = p[P.T0];
    starts.push(p);
  }
  return starts;
}

/**
 * Starting points from the polynomial expansion of q^2: a weighted linear fit of T on
 * (1, u, v, u^2, uv, v^2, u r^2, v r^2, r^4) gives coefficients b = xi(a) with
 * xi = (2a0a1, 2a0a2, a1^2 + 2a0a3, 2a1a2, a2^2 + 2a0a3, 2a1a3, 2a2a3, a3^2); solving b = xi(a)
 * (8 equations, 4 unknowns, many starts) costs nothing next to a fit over the stars, and the
 * star fits then start next to their minima. Single frames only.
 */
export function smartStarts(d: DefocusData, spec: DefocusSpec): Float64Array[] {
  const n = d.n;
  const p = 9;
  const A = new Float64Array(n * p);
  for (let i = 0; i < n; i++) {
    const u = d.u[i];
    const v = d.v[i];
    const r2 = u * u + v * v;
    const row = [1, u, v, u * u, u * v, v * v, u * r2, v * r2, r2 * r2];
    for (let k = 0; k < p; k++) A[i * p + k] = row[k];
  }
  const lin = robustLinearFit(A, d.T, d.sig, p, { mode: 'floor', iterations: 3 });
  if (!lin) return defaultStarts(d, spec);
  const b = Array.from(lin.coef);
  const wts = Array.from({ length: 8 }, (_, k) => 1 / Math.max(1e-30, lin.cov[(k + 1) * p + (k + 1)]));
  const mask = [1, spec.tilt ? 1 : 0, spec.tilt ? 1 : 0, spec.curvature ? 1 : 0];
  const xi = (a: ArrayLike<number>) => [2 * a[0] * a[1], 2 * a[0] * a[2], a[1] * a[1] + 2 * a[0] * a[3], 2 * a[1] * a[2], a[2] * a[2] + 2 * a[0] * a[3], 2 * a[1] * a[3], 2 * a[2] * a[3], a[3] * a[3]];
  const problem: LmProblem = {
    n: 8, y: Float64Array.from(b.slice(1)), w: Float64Array.from(wts),
    model(pr, k, jac) {
      const a = [pr[0] * mask[0], pr[1] * mask[1], pr[2] * mask[2], pr[3] * mask[3]];
      if (jac) {
        const J = [
          [2 * a[1], 2 * a[0], 0, 0], [2 * a[2], 0, 2 * a[0], 0], [2 * a[3], 2 * a[1], 0, 2 * a[0]], [0, 2 * a[2], 2 * a[1], 0],
          [2 * a[3], 0, 2 * a[2], 2 * a[0]], [0, 2 * a[3], 0, 2 * a[1]], [0, 0, 2 * a[3], 2 * a[2]], [0, 0, 0, 2 * a[3]],
        ][k];
        for (let j = 0; j < 4; j++) jac[j] = J[j] * mask[j];
      }
      return xi(a)[k];
    },
  };
  const found: { a: number[]; chi2: number }[] = [];
  for (const st of defaultStarts(d, spec)) {
    const r = levenbergMarquardt(problem, [st[P.a0], st[P.a1], st[P.a2], st[P.a3]], 60);
    found.push({ a: Array.from(r.params, (v, j) => v * mask[j]), chi2: r.chi2 });
  }
  found.sort((x, y) => x.chi2 - y.chi2);
  // Keep a few distinct solutions (up to the single-frame sign), best first.
  const keep: number[][] = [];
  for (const f of found) {
    const canon = f.a[0] < 0 || (f.a[0] === 0 && f.a[1] < 0) ? f.a.map((v) => -v) : f.a;
    if (keep.some((k) => k.every((v, j) => Math.abs(v - canon[j]) < 1e-3 * (1 + Math.abs(v))))) continue;
    keep.push(canon);
    if (keep.length >= 4) break;
  }
  return keep.map((a) => {
    const pr = new Float64Array(NPAR);
    pr[P.a0] = a[0]; pr[P.a1] = a[1]; pr[P.a2] = a[2]; pr[P.a3] = a[3];
    pr[P.T0] = b[0] - a[0] * a[0];
    pr[P.T0b] = pr[P.T0];
    return pr;
  });
}

const CHI2_1_MEDIAN = 0.454936;

/** 1.4826 x the median absolute deviation (a Gaussian sigma). */
function madSpread(v: Float64Array): number {
  const m = median(v);
  return 1.4826 * median(Float64Array.from(v, (x) => Math.abs(x - m)));
}

/**
 * Among solutions that fit equally well (within delta chi^2 4, about 2 sigma), take the one with
 * the largest core T0, i.e. the least defocus: a near-linear size field can also be fitted by
 * a huge defocus with a vanishing seeing core, which the data do not ask for.
 */
const EQUAL_FIT = 4;
function preferLeastDefocus<T extends { params: Float64Array; chi2: number }>(sols: T[]): T | null {
  if (sols.length === 0) return null;
  const min = Math.min(...sols.map((r) => r.chi2));
  let pick: T | null = null;
  for (const r of sols) {
    if (r.chi2 > min + EQUAL_FIT) continue;
    const t0 = r.params[P.T0] + r.params[P.T0b];
    if (!pick || t0 > pick.params[P.T0] + pick.params[P.T0b]) pick = r;
  }
  return pick;
}

/** The other local solution of one frame: best focus on the other side of the tilt line. */
export function branch(p: Float64Array): Float64Array {
  const o = Float64Array.from(p);
  o[P.a0] = -p[P.a0];
  return o;
}

/** Robust multistart fit: Huber reweighting and an intrinsic-scatter floor, re-estimated three times. */
export function fitDefocus(d: DefocusData, spec: DefocusSpec, starts: Float64Array[] = spec.pair ? defaultStarts(d, spec) : smartStarts(d, spec), fixedWeights?: { robust: Float64Array; scatter: number }): DefocusFit | null {
  const n = d.n;
  if (n < 8) return null;
  let robust = fixedWeights ? fixedWeights.robust : new Float64Array(n).fill(1);
  // The first round starts with a floor at the spread of the sizes (MAD), so that a few stars with
  // tiny errors (bright, clipped, odd) cannot steer it; later rounds set the floor from the residuals.
  let scatter = fixedWeights ? fixedWeights.scatter : madSpread(d.T);
  const w = new Float64Array(n);
  const setW = () => { for (let i = 0; i < n; i++) w[i] = robust[i] / (d.sig[i] * d.sig[i] + scatter * scatter); };
  let best: ReturnType<typeof solveFrom> | null = null;
  let pool = starts;
  const rounds = fixedWeights ? 1 : 3;
  for (let round = 0; round < rounds; round++) {
    setW();
    best = null;
    const sols: ReturnType<typeof solveFrom>[] = [];
    for (const s of pool) sols.push(solveFrom(d, w, spec, s));
    best = preferLeastDefocus(sols);
    if (!best) return null;
    if (fixedWeights) break;
    // Residuals -> scatter floor (median normalised chi^2 = median of chi^2_1) and Huber weights.
    const res = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const fr = d.frame ? d.frame[i] : 0;
      res[i] = d.T[i] - sizeAt(best.params, d, i);
    }
    const medZ = (s: number) => medianOf(Float64Array.from(res, (r, i) => (r * r) / (d.sig[i] * d.sig[i] + s * s)));
    if (medZ(0) <= CHI2_1_MEDIAN) scatter = 0;
    else {
      let a = 0;
      let b = Math.sqrt(median(Float64Array.from(res, (r) => r * r)) / CHI2_1_MEDIAN) + 1e-12;
      for (let k = 0; k < 30; k++) { const m = 0.5 * (a + b); if (medZ(m) > CHI2_1_MEDIAN) a = m; else b = m; }
      scatter = b;
    }
    robust = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const z = Math.abs(res[i]) / Math.sqrt(d.sig[i] * d.sig[i] + scatter * scatter);
      robust[i] = z > 6 ? 0 : z > 2.5 ? 2.5 / z : 1;
    }
    // Later rounds start from the best solution and a few of the original starts.
    pool = [best.params, branch(best.params)];
  }
  setW();
  const fin = solveFrom(d, w, spec, best!.params);
  // best.chi2 was summed under the previous round's weights: compare, and report, under the final
  // ones (a chi^2 under other weights made a faultless field with a few outlying bright stars
  // read as a 20-sigma tilt: the full fit's chi^2 came from a round with a wider scatter floor).
  const bestChi2 = chi2At(d, best!.params, { robust, scatter } as DefocusFit);
  const use = fin.chi2 <= bestChi2 + 1e-9 ? fin : { ...best!, chi2: bestChi2 };
  let neff = 0;
  for (let i = 0; i < n; i++) if (robust[i] > 0) neff++;
  const dof = Math.max(1, neff - use.active.length);
  const scale = Math.max(1, use.chi2 / dof);
  const cov = new Float64Array(NPAR * NPAR);
  if (use.covUnit) {
    const k = use.active.length;
    for (let i = 0; i < k; i++) for (let j = 0; j < k; j++) cov[use.active[i] * NPAR + use.active[j]] = use.covUnit[i * k + j] * scale;
  }
  return { params: use.params, cov, chi2: use.chi2, dof, scatter, robust };
}

/** chi^2 of given parameters under the weights of a previous fit. */
export function chi2With(d: DefocusData, spec: DefocusSpec, weightsFrom: DefocusFit, starts?: Float64Array[]): number {
  const f = fitDefocus(d, spec, starts ?? defaultStarts(d, spec), { robust: weightsFrom.robust, scatter: weightsFrom.scatter });
  return f ? f.chi2 : Infinity;
}

export function qAt(params: ArrayLike<number>, u: number, v: number): number {
  return qOf(params, u, v);
}

/** The model's size T of star i of d under params (its frame's core, step and astigmatic term). */
export function sizeAt(params: ArrayLike<number>, d: DefocusData, i: number): number {
  const f = d.frame ? d.frame[i] : 0;
  const q = qOf(params, d.u[i], d.v[i]) + (f ? params[P.s] : 0);
  const Q = Math.sqrt(q * q + astigOf(params, d.u[i], d.v[i]));
  return modelT(f ? params[P.T0b] : params[P.T0], Q, d.eps ?? 0, d.beta ?? null);
}

/** chi^2 of fixed parameters under a previous fit's robust weights and scatter. */
export function chi2At(d: DefocusData, params: ArrayLike<number>, weightsFrom: DefocusFit): number {
  let chi2 = 0;
  for (let i = 0; i < d.n; i++) {
    const w = weightsFrom.robust[i] / (d.sig[i] * d.sig[i] + weightsFrom.scatter * weightsFrom.scatter);
    if (!(w > 0)) continue;
    const r = d.T[i] - sizeAt(params, d, i);
    chi2 += w * r * r;
  }
  return chi2;
}
