/**
 * The symmetric (about the optical centre) part of the field, shared by spacing, astigmatism and
 * curvature: the spin-2 term A (z - z0)^2 (signed radial-minus-tangential moment D = Re A at unit
 * field height, optics.md section 5) and the size growth T(rho) = t0 + t2 rho^2 + t4 rho^4 after
 * the tilt terms, trail and coma contributions are removed.
 */
import type { FieldAnalysis } from '../field/map.ts';
import { fitFixedCentre } from '../field/spin.ts';
import { subsetColumns, type StarColumns } from '../field/quantities.ts';
import { robustLinearFit } from '../field/lsq.ts';
import { clippedMean } from '../field/stats.ts';
import { qAt, modelT, P } from './defocus-fit.ts';
import type { DefocusModel } from './tilt.ts';

export interface Symmetric {
  /** Signed D = I_rad - I_tan at unit field height (px^2) and its error; Im part = 45-degree (swirl) pattern. */
  D: number;
  DErr: number;
  Dim: number;
  DimErr: number;
  significance: number;
  /** Uniform part removed (px^2). */
  uniform: { re: number; im: number };
  /** Size at the centre and symmetric excess at unit field height (px^2), errors. */
  t0: number;
  t0Err: number;
  excess: number;
  excessErr: number;
  /** Mean e_radial of stars beyond 0.6 field height, and its error. */
  outerERadial: number;
  outerERadialErr: number;
  outerN: number;
}

const COMA_MODEL_ERR = 0.1;
const TRAIL_MODEL_ERR = 0.05;

/** Columns with the coma moments and the trail size removed. */
export function correctedColumns(fa: FieldAnalysis, coma: { T: Float64Array; M1: Float64Array; M2: Float64Array } | null, trailSize: Float64Array | null): StarColumns {
  const c = subsetColumns(fa.cols, Int32Array.from({ length: fa.cols.n }, (_, i) => i));
  for (let i = 0; i < c.n; i++) {
    // The removed shares are models: their error (taken as 10 % of coma's and 5 % of a trail's
    // share) joins each star's noise, so a model residual is not mistaken for a pattern.
    let vT = 0;
    let vM = 0;
    if (coma) {
      c.T[i] -= coma.T[i];
      c.M1[i] -= coma.M1[i];
      c.M2[i] -= coma.M2[i];
      vT += (COMA_MODEL_ERR * coma.T[i]) ** 2;
      vM += (COMA_MODEL_ERR * Math.hypot(coma.M1[i], coma.M2[i])) ** 2;
    }
    if (trailSize) {
      c.T[i] -= trailSize[i];
      vT += (TRAIL_MODEL_ERR * trailSize[i]) ** 2;
    }
    (c.sigT as Float64Array)[i] = Math.sqrt(c.sigT[i] ** 2 + vT);
    (c.sigM as Float64Array)[i] = Math.sqrt(c.sigM[i] ** 2 + vM);
    c.e1[i] = c.M1[i] / c.T[i];
    c.e2[i] = c.M2[i] / c.T[i];
  }
  return c;
}

export function symmetricPart(fa: FieldAnalysis, cols: StarColumns, model: DefocusModel | null): Symmetric | null {
  const g = fa.geom;
  const centre = fa.centre;
  const fit = fitFixedCentre(cols, g, centre);
  if (!fit) return null;
  const n = cols.n;
  // Size with the tilt part of the defocus model removed.
  const A = new Float64Array(n * 3);
  const y = new Float64Array(n);
  const p = model?.full.params;
  for (let i = 0; i < n; i++) {
    const u = (cols.x[i] - centre.x) / g.scale;
    const v = (cols.y[i] - centre.y) / g.scale;
    const r2 = u * u + v * v;
    let tiltPart = 0;
    if (p) {
      const q = qAt(p, u, v);
      const qs = p[P.a0] + p[P.a3] * r2;
      tiltPart = modelT(p[P.T0], q, 0, fa.core.beta) - modelT(p[P.T0], qs, 0, fa.core.beta);
    }
    y[i] = cols.T[i] - tiltPart;
    A[i * 3] = 1;
    A[i * 3 + 1] = r2;
    A[i * 3 + 2] = r2 * r2;
  }
  const sf = robustLinearFit(A, y, cols.sigT, 3, { mode: 'floor' });
  if (!sf) return null;
  const cov = sf.cov;
  const excess = sf.coef[1] + sf.coef[2];
  const excessErr = Math.sqrt(Math.max(0, cov[4] + cov[8] + 2 * cov[5]));
  // Model-free check on the outer stars, uniform part removed.
  const er: number[] = [];
  for (let i = 0; i < n; i++) {
    const dx = cols.x[i] - centre.x;
    const dy = cols.y[i] - centre.y;
    if (Math.hypot(dx, dy) / g.scale < 0.6) continue;
    const phi = Math.atan2(dy, dx);
    const m1 = cols.M1[i] - fit.c.re;
    const m2 = cols.M2[i] - fit.c.im;
    er.push((m1 * Math.cos(2 * phi) + m2 * Math.sin(2 * phi)) / cols.T[i]);
  }
  const outer = clippedMean(er);
  return {
    D: fit.a.re, DErr: fit.aErr.re, Dim: fit.a.im, DimErr: fit.aErr.im,
    significance: Math.abs(fit.a.re) / Math.max(1e-12, fit.aErr.re),
    uniform: fit.c,
    t0: sf.coef[0], t0Err: Math.sqrt(Math.max(0, cov[0])),
    excess, excessErr,
    outerERadial: outer.mean, outerERadialErr: outer.err, outerN: outer.n,
  };
}
