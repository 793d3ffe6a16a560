/**
 * Coma and defocus fitted together. Their ray errors add at the same pupil point, so a defocused
 * star shows more spin-1 moment for the same coma, and coma adds to the size that the tilt is
 * read from: fitted apart, each leaks into the other (a tilt pulls the coma centre away, the
 * coma's size share hides the tilt). One model for both observables of every star:
 *   s^2 = T0 / 2 (the seeing-and-pixel core, the same everywhere),
 *   q = a0 + a1 u + a2 v + a3 r^2 (defocus, optics.md 4), disk d = |q| sqrt(8/(1+eps^2)),
 *   S = alpha (z - z0) (coma length, optics.md 3),
 *   T = s^2 F_T(S/s, d/s),  c = F_c(S/s, d/s) along S,
 * F from the closed-form adaptive moments of the joint ray pattern (field/coma-calibration.ts).
 * Levenberg-Marquardt with numerical derivatives from the separate fits, Huber-reweighted once.
 */
import type { FieldAnalysis } from '../field/map.ts';
import type { StarColumns } from '../field/quantities.ts';
import type { Spin1Field } from '../field/types.ts';
import { comaDefocusMoments } from '../field/coma-calibration.ts';
import { levenbergMarquardt, medianOf, choleskyInverse } from '../field/lsq.ts';
import { P } from './defocus-fit.ts';

export interface JointFit {
  /** Defocus parameters in the layout of defocus-fit.ts (T0, -, a0, a1, a2, a3). */
  defocus: Float64Array;
  spin1: Spin1Field;
  chi2: number;
  /** chi^2 of the starting point (the separate fits) under the same weights. */
  startChi2: number;
}

const NP = 9;

/**
 * fixDefocus: hold the defocus terms (and T0) at defocus0 and fit only the coma (alpha, z0): the
 * joint problem has a flat valley where coma's size share trades with curvature, so the caller
 * alternates this with the robust defocus fit (block coordinates) instead of fitting all at once.
 */
export function fitComaDefocus(fa: FieldAnalysis, cols: StarColumns, defocus0: Float64Array, s1: Spin1Field, blurPerQ: number, fixDefocus = false): JointFit | null {
  const n = cols.n;
  if (n < 30) return null;
  const g = fa.geom;
  const c0 = fa.centre;
  const u = Float64Array.from(cols.x, (x) => (x - c0.x) / g.scale);
  const v = Float64Array.from(cols.y, (y) => (y - c0.y) / g.scale);
  const zr = Float64Array.from(cols.x, (x) => (x - g.cx) / g.scale);
  const zi = Float64Array.from(cols.y, (y) => (y - g.cy) / g.scale);
  const out = new Float64Array(3);
  const predict = (p: ArrayLike<number>, i: number, o: Float64Array) => {
    const T0 = Math.max(p[0], 1e-6);
    const s2 = T0 / 2;
    const r2 = u[i] * u[i] + v[i] * v[i];
    const q = p[1] + p[2] * u[i] + p[3] * v[i] + p[4] * r2;
    const d = Math.abs(q) * blurPerQ;
    const ar = zr[i] - p[7];
    const ai = zi[i] - p[8];
    const sx = p[5] * ar - p[6] * ai;
    const sy = p[5] * ai + p[6] * ar;
    const S = Math.hypot(sx, sy);
    const m = comaDefocusMoments(S, d, s2);
    o[0] = m.T;
    o[1] = S > 0 ? (m.c * sx) / S : 0;
    o[2] = S > 0 ? (m.c * sy) / S : 0;
  };
  const y = new Float64Array(3 * n);
  for (let i = 0; i < n; i++) { y[3 * i] = cols.T[i]; y[3 * i + 1] = cols.cx[i]; y[3 * i + 2] = cols.cy[i]; }
  const w = new Float64Array(3 * n);
  const cz = s1.centrePx ?? { x: g.cx, y: g.cy };
  const start = [defocus0[P.T0], defocus0[P.a0], defocus0[P.a1], defocus0[P.a2], defocus0[P.a3], s1.alpha.re, s1.alpha.im, (cz.x - g.cx) / g.scale, (cz.y - g.cy) / g.scale];
  // Row scales: robust spread of the residuals at the start, per kind of row.
  const setWeights = (p: ArrayLike<number>, reweight: boolean) => {
    const rT = new Float64Array(n);
    const rC = new Float64Array(2 * n);
    for (let i = 0; i < n; i++) {
      predict(p, i, out);
      rT[i] = (y[3 * i] - out[0]) / cols.sigT[i];
      rC[2 * i] = (y[3 * i + 1] - out[1]) / cols.sigC[i];
      rC[2 * i + 1] = (y[3 * i + 2] - out[2]) / cols.sigC[i];
    }
    const kT = Math.sqrt(medianOf(rT.map((r) => r * r)) / 0.454936) || 1;
    const kC = Math.sqrt(medianOf(rC.map((r) => r * r)) / 0.454936) || 1;
    for (let i = 0; i < n; i++) {
      const hub = (z: number) => (!reweight ? 1 : z > 6 ? 0 : z > 2.5 ? 2.5 / z : 1);
      w[3 * i] = hub(Math.abs(rT[i]) / kT) / (cols.sigT[i] * kT) ** 2;
      w[3 * i + 1] = hub(Math.abs(rC[2 * i]) / kC) / (cols.sigC[i] * kC) ** 2;
      w[3 * i + 2] = hub(Math.abs(rC[2 * i + 1]) / kC) / (cols.sigC[i] * kC) ** 2;
    }
  };
  const base = new Float64Array(3);
  const bumped = new Float64Array(3);
  const q = new Float64Array(NP);
  const steps = [1e-4, 1e-4, 1e-4, 1e-4, 1e-4, 1e-4, 1e-4, 1e-5, 1e-5];
  const problem = {
    n: 3 * n, y, w,
    model(p: Float64Array, row: number): number {
      const i = Math.floor(row / 3);
      predict(p, i, base);
      return base[row % 3];
    },
    batch(p: Float64Array, M: Float64Array | null, gr: Float64Array | null): number {
      let chi2 = 0;
      const J = new Float64Array(3 * NP);
      q.set(p);
      for (let i = 0; i < n; i++) {
        predict(p, i, base);
        const res = [y[3 * i] - base[0], y[3 * i + 1] - base[1], y[3 * i + 2] - base[2]];
        chi2 += w[3 * i] * res[0] * res[0] + w[3 * i + 1] * res[1] * res[1] + w[3 * i + 2] * res[2] * res[2];
        if (!M || !gr) continue;
        for (let j = 0; j < NP; j++) {
          const h = steps[j] * (1 + Math.abs(p[j]));
          q[j] = p[j] + h;
          predict(q, i, bumped);
          q[j] = p[j];
          for (let k = 0; k < 3; k++) J[k * NP + j] = (bumped[k] - base[k]) / h;
        }
        for (let k = 0; k < 3; k++) {
          const wk = w[3 * i + k];
          if (!(wk > 0)) continue;
          for (let a = 0; a < NP; a++) {
            const ja = J[k * NP + a] * wk;
            if (ja === 0) continue;
            gr[a] += ja * res[k];
            for (let b = 0; b <= a; b++) M[a * NP + b] += ja * J[k * NP + b];
          }
        }
      }
      return chi2;
    },
  };
  // Two starts for the coma centre: the separate fit's and the frame centre (a tilt can pull the
  // separate fit's centre far off).
  const starts = [start, [...start.slice(0, 7), 0, 0]];
  const active = fixDefocus ? [5, 6, 7, 8] : [0, 1, 2, 3, 4, 5, 6, 7, 8];
  const full = Float64Array.from(start);
  const expand = (a: ArrayLike<number>) => { for (let k = 0; k < active.length; k++) full[active[k]] = a[k]; return full; };
  const sub = {
    n: problem.n, y, w,
    model: (a: Float64Array, row: number) => problem.model(Float64Array.from(expand(a)), row),
    batch(a: Float64Array, M: Float64Array | null, gr: Float64Array | null): number {
      const pf = Float64Array.from(expand(a));
      if (!M || !gr) return problem.batch(pf, null, null);
      const Mf = new Float64Array(NP * NP);
      const gf = new Float64Array(NP);
      const chi2 = problem.batch(pf, Mf, gf);
      for (let i2 = 0; i2 < active.length; i2++) {
        gr[i2] = gf[active[i2]];
        for (let j2 = 0; j2 <= i2; j2++) M[i2 * active.length + j2] = Mf[active[i2] * NP + active[j2]];
      }
      return chi2;
    },
  };
  let r: ReturnType<typeof levenbergMarquardt> | null = null;
  setWeights(start, false);
  for (const st of starts) {
    const t = levenbergMarquardt(sub, active.map((k) => st[k]), 40);
    if (!r || t.chi2 < r.chi2) r = t;
  }
  setWeights(expand(r!.params), true);
  const startChi2 = sub.batch(Float64Array.from(active.map((k) => start[k])), null, null);
  r = levenbergMarquardt(sub, Array.from(r!.params), 40);
  if (!r.covUnit) return null;
  const p = Float64Array.from(expand(r.params));
  const na = active.length;
  const covFull = new Float64Array(NP * NP);
  for (let i2 = 0; i2 < na; i2++) for (let j2 = 0; j2 < na; j2++) covFull[active[i2] * NP + active[j2]] = r.covUnit[i2 * na + j2];
  if (!(p[0] > 0) || !Number.isFinite(r.chi2)) return null;
  let neff = 0;
  for (let k = 0; k < 3 * n; k++) if (w[k] > 0) neff++;
  const sc = Math.max(1, r.chi2 / Math.max(1, neff - na));
  const cov = covFull;
  const cv = (a: number, b: number) => cov[a * NP + b] * sc;
  const inv = choleskyInverse(new Float64Array([cv(5, 5), cv(5, 6), cv(6, 5), cv(6, 6)]), 2);
  const sig = inv ? Math.sqrt(Math.max(0, p[5] * p[5] * inv[0] + 2 * p[5] * p[6] * inv[1] + p[6] * p[6] * inv[3])) : 0;
  const defocus = Float64Array.from(defocus0);
  defocus[P.T0] = p[0]; defocus[P.a0] = p[1]; defocus[P.a1] = p[2]; defocus[P.a2] = p[3]; defocus[P.a3] = p[4];
  const centreKnown = s1.centrePx !== null;
  return {
    defocus,
    chi2: r.chi2,
    startChi2,
    spin1: {
      ...s1,
      alpha: { re: p[5], im: p[6] },
      alphaErr: { re: Math.sqrt(Math.max(0, cv(5, 5))), im: Math.sqrt(Math.max(0, cv(6, 6))) },
      alphaSignificance: sig,
      centrePx: centreKnown ? { x: g.cx + p[7] * g.scale, y: g.cy + p[8] * g.scale } : null,
      centreErrPx: centreKnown ? { x: Math.max(0.1, Math.sqrt(Math.max(0, cv(7, 7))) * g.scale), y: Math.max(0.1, Math.sqrt(Math.max(0, cv(8, 8))) * g.scale) } : null,
    },
  };
}
