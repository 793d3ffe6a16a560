/**
 * The second opinion every fault must pass (issue 14): the same model fitted to zone medians.
 * Per-star fits weigh each star by its own noise, so a handful of stars that differ from the rest
 * (clipped cores, blends, junk) can pull a fit many sigma; a zone's median ignores them, and the
 * scatter of the zone medians about the model (an intrinsic-scatter floor, lsq.ts 'floor' mode)
 * enters the errors. With few zones that floor is itself uncertain, so each test is read as an
 * F (or t) statistic with the zones' degrees of freedom and turned into the sigma of a chi^2
 * with the same tail probability. A fault is significant only when both the stars and the zones
 * say so; the significance reported is the smaller of the two.
 */
import type { FieldAnalysis } from '../field/map.ts';
import type { StarColumns } from '../field/quantities.ts';
import { adaptiveDims } from '../field/zones.ts';
import { clippedMean, median } from '../field/stats.ts';
import { complexDesign, interleave } from '../field/spin.ts';
import { choleskyInverse, robustLinearFit, type LinearFit } from '../field/lsq.ts';
import { fitDefocus, smartStarts, type DefocusData } from './defocus-fit.ts';

/** Fewest stars for a zone median. */
export const MIN_ZONE_STARS = 5;
/** Stars per zone aimed at (the grid has 3 to 12 zones a side). */
export const ZONE_STARS = 12;

export interface ZoneMedians {
  /** Zones kept (at least MIN_ZONE_STARS stars each). */
  n: number;
  x: Float64Array;
  y: Float64Array;
  stars: Int32Array;
  /** Per value column: the zones' robust means and their standard errors. */
  med: Float64Array[];
  err: Float64Array[];
}

const CHI2_1_MEDIAN = 0.454936;

/**
 * A zone's robust mean of values v with per-star errors s: started at the median, then weighted
 * means with Huber weights (2.5) and rejection (6) of the residuals normalised by s and an
 * intrinsic-scatter floor set so that the median normalised residual^2 is the median of chi^2_1
 * (as the field fits do, lsq.ts). Starting at the median keeps a few stars with tiny errors and
 * odd values (clipped bright stars) from steering it; the weights keep the bright stars' precision.
 */
export function robustZoneMean(v: Float64Array, s: Float64Array): { mean: number; err: number } {
  const n = v.length;
  if (n === 0) return { mean: NaN, err: NaN };
  let m = median(v);
  let floor = 0;
  const z2 = new Float64Array(n);
  let sw = 0;
  let chi2 = 0;
  let kept = 0;
  for (let it = 0; it < 6; it++) {
    const norm = (f: number) => { for (let i = 0; i < n; i++) z2[i] = (v[i] - m) ** 2 / (s[i] * s[i] + f * f); return median(z2); };
    if (norm(0) <= CHI2_1_MEDIAN) floor = 0;
    else {
      let lo = 0;
      let hi = Math.sqrt(median(Float64Array.from(v, (x) => (x - m) ** 2)) / CHI2_1_MEDIAN) + 1e-12;
      for (let k = 0; k < 40; k++) { const mid = 0.5 * (lo + hi); if (norm(mid) > CHI2_1_MEDIAN) lo = mid; else hi = mid; }
      floor = hi;
    }
    let sv = 0;
    sw = 0;
    for (let i = 0; i < n; i++) {
      const vi = s[i] * s[i] + floor * floor;
      const z = Math.abs(v[i] - m) / Math.sqrt(vi);
      const w = (z > 6 ? 0 : z > 2.5 ? 2.5 / z : 1) / vi;
      sv += w * v[i];
      sw += w;
    }
    const next = sw > 0 ? sv / sw : m;
    const done = Math.abs(next - m) <= 1e-9 * (Math.abs(m) + 1e-12);
    m = next;
    if (done) break;
  }
  chi2 = 0;
  kept = 0;
  for (let i = 0; i < n; i++) {
    const vi = s[i] * s[i] + floor * floor;
    const z = Math.abs(v[i] - m) / Math.sqrt(vi);
    if (z > 6) continue;
    chi2 += (z > 2.5 ? 2.5 / z : 1) * z * z;
    kept++;
  }
  const scale = kept > 1 ? Math.max(1, chi2 / (kept - 1)) : 1;
  return { mean: m, err: sw > 0 ? Math.sqrt(scale / sw) : NaN };
}

/** Robust zone means of the given per-star columns (value, error) on a cols x rows grid over the frame. */
export function zoneMedians(c: StarColumns, width: number, height: number, cols: number, rows: number, values: { v: Float64Array; s: Float64Array }[]): ZoneMedians {
  const cw = width / cols;
  const ch = height / rows;
  const members: number[][] = Array.from({ length: cols * rows }, () => []);
  for (let i = 0; i < c.n; i++) {
    const q = Math.min(cols - 1, Math.max(0, Math.floor((c.x[i] + 0.5) / cw)));
    const r = Math.min(rows - 1, Math.max(0, Math.floor((c.y[i] + 0.5) / ch)));
    members[r * cols + q].push(i);
  }
  const kept = members.filter((m) => m.length >= MIN_ZONE_STARS);
  const n = kept.length;
  const out: ZoneMedians = {
    n, x: new Float64Array(n), y: new Float64Array(n), stars: new Int32Array(n),
    med: values.map(() => new Float64Array(n)), err: values.map(() => new Float64Array(n)),
  };
  kept.forEach((m, z) => {
    out.x[z] = clippedMean(Float64Array.from(m, (i) => c.x[i]), 99).mean;
    out.y[z] = clippedMean(Float64Array.from(m, (i) => c.y[i]), 99).mean;
    out.stars[z] = m.length;
    values.forEach((col, k) => {
      const r = robustZoneMean(Float64Array.from(m, (i) => col.v[i]), Float64Array.from(m, (i) => Math.max(1e-12, col.s[i])));
      out.med[k][z] = r.mean;
      out.err[k][z] = r.err;
    });
  });
  return out;
}

/**
 * The significance of a test statistic chi2 (k = 1 or 2 parameters) on the zones. Where the zones
 * scatter within their own errors (no intrinsic-scatter floor was needed) the errors are taken as
 * known and sigma = sqrt(chi2). Where the floor was estimated from the zones' scatter, chi2 / k is
 * an F(k, dof) statistic: for k = 2, P(F > f) = (1 + 2 f / dof)^(-dof/2) exactly, so the chi^2_2
 * sigma with the same tail is sqrt(dof ln(1 + chi2 / dof)); for k = 1 the same expression is the
 * Wallace (1959) normalisation of a t statistic (from memory), used as an approximation.
 */
export function zoneSigma(chi2: number, dof: number, floorEstimated = true): number {
  if (!(chi2 > 0)) return 0;
  if (!floorEstimated) return Math.sqrt(chi2);
  if (!(dof > 0)) return 0;
  return Math.sqrt(dof * Math.log1p(chi2 / dof));
}

function pairChi2(fit: LinearFit, j: number): number {
  const p = fit.p;
  const a = fit.coef[2 * j];
  const b = fit.coef[2 * j + 1];
  const C = new Float64Array([fit.cov[2 * j * p + 2 * j], fit.cov[2 * j * p + 2 * j + 1], fit.cov[(2 * j + 1) * p + 2 * j], fit.cov[(2 * j + 1) * p + 2 * j + 1]]);
  const inv = choleskyInverse(C, 2);
  if (!inv) return 0;
  return Math.max(0, a * a * inv[0] + 2 * a * b * inv[1] + b * b * inv[3]);
}

function dofOf(fit: LinearFit): number {
  let neff = 0;
  for (let r = 0; r < fit.n; r++) if (fit.robust[r] > 0) neff++;
  return Math.max(1, neff - fit.p);
}

export interface SpinZoneChecks {
  zones: number;
  /** Uniform spin-2 part (trailing) and the spin-2 pattern about the centre (field rotation); null where the zones are too few. */
  uniformElongation: number | null;
  pattern: number | null;
  /** Coma growing with field height, and coma the same everywhere. */
  comaField: number | null;
  comaUniform: number | null;
}

export interface SizeZoneChecks {
  zones: number;
  tilt: number | null;
  curvature: number | null;
  /** Real (radial/tangential) part of the spin-2 pattern about the optical centre, after the coma and trail shares. */
  spacing: number | null;
}

/** The zone grid: the field map's adaptive one, or 3 x 3 where the stars are too sparse for it. */
function zonesOf(fa: FieldAnalysis, c: StarColumns, values: { v: Float64Array; s: Float64Array }[]): ZoneMedians {
  const g = fa.geom;
  const dims = adaptiveDims(fa.cols.n, g, ZONE_STARS);
  const z = zoneMedians(c, g.width, g.height, dims.cols, dims.rows, values);
  if (z.n >= 9 || (dims.cols === 3 && dims.rows === 3)) return z;
  return zoneMedians(c, g.width, g.height, 3, 3, values);
}

function coords(fa: FieldAnalysis, z: ZoneMedians): { u: Float64Array; v: Float64Array } {
  const g = fa.geom;
  return { u: Float64Array.from(z.x, (x) => (x - fa.centre.x) / g.scale), v: Float64Array.from(z.y, (y) => (y - fa.centre.y) / g.scale) };
}

/** M = A (z - z0)^2 + C on zone medians, z0 the optical centre (or the given one). */
function spin2Zones(fa: FieldAnalysis, z: ZoneMedians, k1: number, k2: number, about: { x: number; y: number } = fa.centre): LinearFit | null {
  const u = Float64Array.from(z.x, (x) => (x - about.x) / fa.geom.scale);
  const v = Float64Array.from(z.y, (y) => (y - about.y) / fa.geom.scale);
  const { A, p } = complexDesign(u, v, (re, im) => [[re * re - im * im, 2 * re * im], [1, 0]]);
  return robustLinearFit(A, interleave(z.med[k1], z.med[k2]), interleave(z.err[k1], z.err[k2]), p, { mode: 'floor' });
}

/** Zone-median tests of trailing and coma, on the measured columns. */
export function spinZoneChecks(fa: FieldAnalysis): SpinZoneChecks {
  const c = fa.cols;
  const z = zonesOf(fa, c, [{ v: c.M1, s: c.sigM }, { v: c.M2, s: c.sigM }, { v: c.sx, s: c.sigS }, { v: c.sy, s: c.sigS }]);
  const out: SpinZoneChecks = { zones: z.n, uniformElongation: null, pattern: null, comaField: null, comaUniform: null };
  if (z.n < 6) return out;
  // As the stars' fit (field/spin.ts fitSpin2): the pattern A z^2 + B z + C about the frame
  // centre (its own centre may lie anywhere, a rotation centre off the frame too), and the
  // uniform part C with the pattern about its located centre.
  const g = fa.geom;
  const zr0 = Float64Array.from(z.x, (x) => (x - g.cx) / g.scale);
  const zi0 = Float64Array.from(z.y, (y) => (y - g.cy) / g.scale);
  const dp = complexDesign(zr0, zi0, (re, im) => [[re * re - im * im, 2 * re * im], [re, im], [1, 0]]);
  const fp = robustLinearFit(dp.A, interleave(z.med[0], z.med[1]), interleave(z.err[0], z.err[1]), dp.p, { mode: 'floor' });
  if (fp) out.pattern = zoneSigma(pairChi2(fp, 0), dofOf(fp), fp.scatter > 0);
  const located = fa.map.spin2?.centrePx ?? { x: g.cx, y: g.cy };
  const f2 = spin2Zones(fa, z, 0, 1, located);
  if (f2) out.uniformElongation = zoneSigma(pairChi2(f2, 1), dofOf(f2), f2.scatter > 0);
  // Coma length vectors: S = alpha (z - z0) + uniform.
  const { u, v } = coords(fa, z);
  const { A, p } = complexDesign(u, v, (re, im) => [[re, im], [1, 0]]);
  const f1 = robustLinearFit(A, interleave(z.med[2], z.med[3]), interleave(z.err[2], z.err[3]), p, { mode: 'floor' });
  if (f1) {
    out.comaField = zoneSigma(pairChi2(f1, 0), dofOf(f1), f1.scatter > 0);
    out.comaUniform = zoneSigma(pairChi2(f1, 1), dofOf(f1), f1.scatter > 0);
  }
  return out;
}

/** Zone-median tests of tilt, curvature (the defocus model) and the spacing pattern, on the corrected columns. */
export function sizeZoneChecks(fa: FieldAnalysis, corrected: StarColumns): SizeZoneChecks {
  const z = zonesOf(fa, corrected, [{ v: corrected.T, s: corrected.sigT }, { v: corrected.M1, s: corrected.sigM }, { v: corrected.M2, s: corrected.sigM }]);
  const out: SizeZoneChecks = { zones: z.n, tilt: null, curvature: null, spacing: null };
  if (z.n < 6) return out;
  const f2 = spin2Zones(fa, z, 1, 2);
  if (f2) {
    const t2 = (f2.coef[0] * f2.coef[0]) / Math.max(1e-300, f2.cov[0]);
    out.spacing = zoneSigma(t2, dofOf(f2), f2.scatter > 0);
  }
  // the defocus model has five parameters: at least three zones beyond them
  if (z.n < 8) return out;
  const { u, v } = coords(fa, z);
  const d: DefocusData = { n: z.n, u, v, T: z.med[0], sig: z.err[0], frame: null, beta: fa.core.beta };
  const full = fitDefocus(d, { tilt: true, curvature: true, pair: null });
  if (!full) return out;
  const fixed = { robust: full.robust, scatter: full.scatter };
  const s2 = Math.max(1, full.chi2 / full.dof);
  const noTilt = fitDefocus(d, { tilt: false, curvature: true, pair: null }, smartStarts(d, { tilt: false, curvature: true, pair: null }), fixed);
  const noCurv = fitDefocus(d, { tilt: true, curvature: false, pair: null }, smartStarts(d, { tilt: true, curvature: false, pair: null }), fixed);
  // the models are nested: the full one, started from a reduced one's solution, fits at least as well
  let best = full.chi2;
  for (const r of [noTilt, noCurv]) {
    if (!r || r.chi2 >= best) continue;
    const again = fitDefocus(d, { tilt: true, curvature: true, pair: null }, [r.params], fixed);
    best = Math.min(best, r.chi2, again ? again.chi2 : Infinity);
  }
  if (noTilt) out.tilt = zoneSigma(Math.max(0, noTilt.chi2 - best) / s2, full.dof, full.scatter > 0 || s2 > 1);
  if (noCurv) out.curvature = zoneSigma(Math.max(0, noCurv.chi2 - best) / s2, full.dof, full.scatter > 0 || s2 > 1);
  return out;
}

/** The smaller of the stars' and the zones' significance (the zones' may be unavailable). */
export function robustSigma(stars: number, zones: number | null): number {
  return zones === null ? stars : Math.min(stars, zones);
}
