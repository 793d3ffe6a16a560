/**
 * Spacing sweep (optics.md section 5): frames at known spacer distances; per frame the signed
 * radial-minus-tangential moment D at unit field height (seeing cancels exactly) and the corner
 * size excess E = T(corner) - T(centre) (px^2, seeing cancels too). The best spacing is where D
 * changes sign (a low-order fit, root) or, when D keeps one sign (curvature and astigmatism can
 * grow together), where E is smallest (parabola vertex). Uncertainties by a parametric bootstrap
 * of the per-frame errors, scaled up when the points scatter more than their errors say.
 */
import { diagnose } from '../diagnose/index.ts';
import { weightedSolve } from '../field/lsq.ts';
import { rng, gauss } from '../field/stats.ts';
import type { Finding } from '../diagnose/types.ts';
import { fmt } from '../diagnose/words.ts';
import { usage } from '../errors.ts';
import { checkFrame, checkSameSetup, fromAnalysis, type AnalysisLike, type FrameIdentity, type FrameInput } from './input.ts';

export interface SweepPointInput extends FrameInput {
  readonly spacingMm: number;
}

export interface SweepPoint {
  spacingMm: number;
  label: string | null;
  starsUsed: number;
  radMinusTanPx2: number | null;
  radMinusTanErrPx2: number | null;
  cornerExcessPx2: number | null;
  cornerExcessErrPx2: number | null;
  cornerToCentreSize: number | null;
  pattern: 'radial' | 'tangential' | 'none';
}

export interface SweepFit {
  /** Polynomial coefficients, lowest order first, in the variable (s - origin). */
  coef: number[];
  origin: number;
  degree: number;
  chi2: number;
  dof: number;
  estimateMm: number | null;
  uncertaintyMm: number | null;
}

export interface SweepResult {
  schema: 'skyloupe.sweep/1';
  points: SweepPoint[];
  bestSpacingMm: number | null;
  uncertaintyMm: number | null;
  evidence: 'zero-crossing' | 'minimum' | 'both' | 'none';
  zeroCrossing: SweepFit | null;
  minimum: SweepFit | null;
  /** How the corner pattern turns as the spacing grows (this system's own rule, measured). */
  trend: 'radial-with-more-spacing' | 'tangential-with-more-spacing' | null;
  /** How the estimate was found; without one, a whole sentence that follows "No best spacing found." */
  note: string;
  /** Warnings about the inputs (plate scales that differ a little). */
  notes: string[];
  findings: Finding[];
}

const BOOT = 400;

interface Poly { coef: Float64Array; cov: Float64Array; chi2: number; dof: number; scale: number }

function polyFit(x: number[], y: number[], s: number[], degree: number): Poly | null {
  const n = x.length;
  const p = degree + 1;
  if (n < p) return null;
  const A = new Float64Array(n * p);
  for (let i = 0; i < n; i++) for (let k = 0; k < p; k++) A[i * p + k] = x[i] ** k;
  const w = Float64Array.from(s, (v) => 1 / (v * v));
  const sol = weightedSolve(A, Float64Array.from(y), w, p);
  if (!sol) return null;
  let chi2 = 0;
  for (let i = 0; i < n; i++) {
    let f = 0;
    for (let k = 0; k < p; k++) f += A[i * p + k] * sol.coef[k];
    chi2 += w[i] * (y[i] - f) ** 2;
  }
  const dof = n - p;
  const scale = dof > 0 ? Math.max(1, chi2 / dof) : 1;
  return { coef: sol.coef, cov: sol.covUnit.map((v) => v * scale), chi2, dof, scale };
}

function evalPoly(c: ArrayLike<number>, x: number): number {
  let f = 0;
  for (let k = c.length - 1; k >= 0; k--) f = f * x + c[k];
  return f;
}

/** Real root of a degree-1 or -2 polynomial nearest to x = 0 within [lo, hi], or null. */
function rootNear(c: ArrayLike<number>, lo: number, hi: number): number | null {
  const roots: number[] = [];
  if (c.length === 2 || Math.abs(c[2] ?? 0) < 1e-12 * (Math.abs(c[1]) + 1e-300)) {
    if (c[1] !== 0) roots.push(-c[0] / c[1]);
  } else {
    const [a0, a1, a2] = [c[0], c[1], c[2]];
    const disc = a1 * a1 - 4 * a2 * a0;
    if (disc >= 0) {
      const q = -0.5 * (a1 + Math.sign(a1 || 1) * Math.sqrt(disc));
      roots.push(q / a2);
      if (q !== 0) roots.push(a0 / q);
    }
  }
  const ok = roots.filter((r) => Number.isFinite(r) && r >= lo && r <= hi).sort((a, b) => Math.abs(a) - Math.abs(b));
  return ok.length ? ok[0] : null;
}

function robustSpread(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  const q = (f: number) => s[Math.min(s.length - 1, Math.max(0, Math.round(f * (s.length - 1))))];
  return 0.5 * (q(0.8413) - q(0.1587));
}

/** Fit D(s) and find its zero; the degree (1 or 2) by AIC when four or more points. */
function zeroCrossing(x: number[], y: number[], s: number[], origin: number, lo: number, hi: number): SweepFit | null {
  let best: Poly | null = polyFit(x, y, s, 1);
  let degree = 1;
  if (x.length >= 4) {
    const q = polyFit(x, y, s, 2);
    if (q && best && q.chi2 + 2 * 3 < best.chi2 + 2 * 2 - 2) { best = q; degree = 2; }
  }
  if (!best) return null;
  const r0 = rootNear(best.coef, lo, hi);
  if (r0 === null) return { coef: Array.from(best.coef), origin, degree, chi2: best.chi2, dof: best.dof, estimateMm: null, uncertaintyMm: null };
  const rand = rng(4242);
  const roots: number[] = [];
  const k = Math.sqrt(best.scale);
  for (let b = 0; b < BOOT; b++) {
    const yb = y.map((v, i) => v + k * s[i] * gauss(rand));
    const f = polyFit(x, yb, s, degree);
    const r = f ? rootNear(f.coef, lo - (hi - lo), hi + (hi - lo)) : null;
    if (r !== null) roots.push(r);
  }
  const unc = roots.length > BOOT / 2 ? robustSpread(roots) : null;
  return { coef: Array.from(best.coef), origin, degree, chi2: best.chi2, dof: best.dof, estimateMm: origin + r0, uncertaintyMm: unc };
}

/** Parabola through E(s); its vertex when it opens upward. */
function minimumOf(x: number[], y: number[], s: number[], origin: number, lo: number, hi: number): SweepFit | null {
  const f = polyFit(x, y, s, 2);
  if (!f) return null;
  const c2 = f.coef[2];
  const c2err = Math.sqrt(Math.max(0, f.cov[8]));
  const vertex = -f.coef[1] / (2 * c2);
  const fit: SweepFit = { coef: Array.from(f.coef), origin, degree: 2, chi2: f.chi2, dof: f.dof, estimateMm: null, uncertaintyMm: null };
  if (!(c2 > 2 * c2err) || !(vertex >= lo && vertex <= hi)) return fit;
  const rand = rng(2424);
  const v: number[] = [];
  const k = Math.sqrt(f.scale);
  for (let b = 0; b < BOOT; b++) {
    const yb = y.map((val, i) => val + k * s[i] * gauss(rand));
    const g = polyFit(x, yb, s, 2);
    if (g && g.coef[2] > 0) v.push(-g.coef[1] / (2 * g.coef[2]));
  }
  fit.estimateMm = origin + vertex;
  fit.uncertaintyMm = v.length > BOOT / 2 ? robustSpread(v) : null;
  return fit;
}

export function sweepFrames(inputs: readonly SweepPointInput[]): SweepResult {
  if (!Array.isArray(inputs) || inputs.length < 3) {
    throw usage(`sweep: ${inputs?.length ?? 0} frame${inputs?.length === 1 ? '' : 's'} cannot show where the corner stars turn from one orientation to the other; give at least three frames at different spacings (--at MM=FRAME), five or more are better`);
  }
  inputs.forEach((p, i) => checkFrame(p, `sweep frame ${p.label ?? i + 1}`));
  const spacings = inputs.map((p) => p.spacingMm);
  if (spacings.some((s) => !Number.isFinite(s))) throw usage('sweep: every spacing must be a number of millimetres');
  const seen = new Map<number, number>();
  inputs.forEach((p, i) => {
    const j = seen.get(p.spacingMm);
    if (j !== undefined) throw usage(`sweep: ${inputs[j].label ?? `frame ${j + 1}`} and ${p.label ?? `frame ${i + 1}`} have the same spacing (${p.spacingMm} mm); give each frame its own spacer distance`);
    seen.set(p.spacingMm, i);
  });
  // A spacer changes the focal length by far less than this; more is another lens or camera.
  const notes = checkSameSetup('sweep', inputs, undefined, { scaleTolerance: 0.05 });
  const points: SweepPoint[] = [...inputs].sort((a, b) => a.spacingMm - b.spacingMm).map((p) => {
    const d = diagnose(p.stars, { width: p.width, height: p.height, optics: p.optics, displayTopRow: p.displayTopRow }).diagnosis;
    return {
      spacingMm: p.spacingMm, label: p.label ?? null, starsUsed: d.starsUsed,
      radMinusTanPx2: d.spacing.radMinusTanPx2, radMinusTanErrPx2: d.spacing.radMinusTanErrPx2,
      cornerExcessPx2: d.spacing.cornerExcessPx2, cornerExcessErrPx2: d.spacing.cornerExcessErrPx2,
      cornerToCentreSize: d.spacing.cornerToCentreSize, pattern: d.spacing.pattern,
    };
  });
  const lo = points[0].spacingMm;
  const hi = points[points.length - 1].spacingMm;
  const origin = 0.5 * (lo + hi);
  const span = hi - lo;
  const okD = points.filter((p) => p.radMinusTanPx2 !== null && (p.radMinusTanErrPx2 ?? 0) > 0);
  const okE = points.filter((p) => p.cornerExcessPx2 !== null && (p.cornerExcessErrPx2 ?? 0) > 0);
  const xD = okD.map((p) => p.spacingMm - origin);
  const yD = okD.map((p) => p.radMinusTanPx2 as number);
  const sD = okD.map((p) => p.radMinusTanErrPx2 as number);
  // A zero crossing counts where the measured D has both signs beyond 2 sigma.
  const pos = okD.some((p) => (p.radMinusTanPx2 as number) > 2 * (p.radMinusTanErrPx2 as number));
  const neg = okD.some((p) => (p.radMinusTanPx2 as number) < -2 * (p.radMinusTanErrPx2 as number));
  const zc = okD.length >= 2 ? zeroCrossing(xD, yD, sD, origin, lo - origin - 0.25 * span, hi - origin + 0.25 * span) : null;
  const useZ = !!(zc && zc.estimateMm !== null && pos && neg);
  const mn = okE.length >= 3 ? minimumOf(okE.map((p) => p.spacingMm - origin), okE.map((p) => p.cornerExcessPx2 as number), okE.map((p) => p.cornerExcessErrPx2 as number), origin, lo - origin, hi - origin) : null;
  const useM = !!(mn && mn.estimateMm !== null && mn.uncertaintyMm !== null);
  let best: number | null = null;
  let unc: number | null = null;
  let evidence: SweepResult['evidence'] = 'none';
  let note: string;
  if (useZ && useM) {
    const a = zc!.estimateMm as number, ua = zc!.uncertaintyMm ?? Infinity;
    const b = mn!.estimateMm as number, ub = mn!.uncertaintyMm ?? Infinity;
    if (Math.abs(a - b) <= 2 * Math.hypot(ua, ub)) {
      const wa = 1 / (ua * ua), wb = 1 / (ub * ub);
      best = (a * wa + b * wb) / (wa + wb);
      unc = 1 / Math.sqrt(wa + wb);
      evidence = 'both';
      note = 'the elongation pattern changes sign and the corner size is smallest at the same spacing';
    } else {
      best = a; unc = ua; evidence = 'zero-crossing';
      note = `the elongation pattern changes sign at ${fmt(a, 2)} mm but the corner size is smallest at ${fmt(b, 2)} mm; the sign change (insensitive to seeing) is used. A residual field curvature or tilt can pull the size minimum away`;
    }
  } else if (useZ) {
    best = zc!.estimateMm; unc = zc!.uncertaintyMm; evidence = 'zero-crossing';
    note = 'from the spacing where the corner elongation changes from one orientation to the other';
  } else if (useM) {
    best = mn!.estimateMm; unc = mn!.uncertaintyMm; evidence = 'minimum';
    note = 'the elongation keeps one orientation over the sweep, so the spacing with the smallest corner stars is used';
  } else {
    const slope = zc ? zc.coef[1] : 0;
    const meanD = yD.length ? yD.reduce((s, v) => s + v, 0) / yD.length : 0;
    const toward = slope !== 0 ? (meanD / slope > 0 ? 'shorter' : 'longer') : null;
    // A whole sentence: the page and the CLI put it after "No best spacing found."
    note = `Neither a sign change of the corner elongation nor a smallest corner size lies inside the sweep (${fmt(lo, 2)} to ${fmt(hi, 2)} mm)${toward ? `; the trend points to ${toward} spacings: extend the sweep that way` : ''}.`;
  }
  const slope = zc ? zc.coef[1] : 0;
  const trend = zc && useZ ? (slope > 0 ? 'radial-with-more-spacing' : 'tangential-with-more-spacing') : null;
  const findings: Finding[] = [];
  if (best !== null) {
    findings.push({
      code: 'SWEEP_BEST', severity: 'info',
      message: `Best spacing ${fmt(best, 2)} ± ${fmt(unc, 2)} mm (${evidence === 'both' ? 'sign change of the corner elongation and smallest corner stars agree' : evidence === 'zero-crossing' ? 'where the corner elongation changes sign' : 'smallest corner stars'}, from ${points.length} frames).${trend ? ` For this system the corners turn ${trend.startsWith('radial') ? 'radial' : 'tangential'} as the spacing grows.` : ''}`,
      numbers: { bestSpacingMm: best, uncertaintyMm: unc, evidence, frames: points.length },
    });
  } else {
    findings.push({ code: 'SWEEP_NONE', severity: 'minor', message: `No best spacing found. ${note}`, numbers: { frames: points.length } });
  }
  for (const n of notes) findings.push({ code: 'SWEEP_INPUT', severity: 'info', message: `${n[0].toUpperCase()}${n.slice(1)}.` });
  return { schema: 'skyloupe.sweep/1', points, bestSpacingMm: best, uncertaintyMm: unc, evidence, zeroCrossing: zc, minimum: mn, trend, note, notes, findings };
}

/** CLI-facing: `sweep --at MM=FRAME ...` on analyses. */
export function runSweep(items: readonly { spacingMm: number; analysis: AnalysisLike; label?: string; identity?: FrameIdentity | null }[]): SweepResult {
  return sweepFrames(items.map((it) => ({ ...fromAnalysis(it.analysis, it.label, it.identity), spacingMm: it.spacingMm })));
}

export function formatSweep(r: SweepResult): string {
  const lines = ['Spacing sweep: corner radial-minus-tangential moment D and corner size excess E (px²):'];
  for (const p of r.points) {
    lines.push(`  ${fmt(p.spacingMm, 2).padStart(8)} mm  D ${fmt(p.radMinusTanPx2, 3).padStart(7)} ± ${fmt(p.radMinusTanErrPx2, 3)}  E ${fmt(p.cornerExcessPx2, 3).padStart(7)} ± ${fmt(p.cornerExcessErrPx2, 3)}  ${p.pattern}${p.label ? `  ${p.label}` : ''}`);
  }
  lines.push(r.bestSpacingMm !== null ? `  best spacing ${fmt(r.bestSpacingMm, 2)} ± ${fmt(r.uncertaintyMm, 2)} mm (${r.evidence}): ${r.note}` : `  No best spacing found. ${r.note}`);
  for (const n of r.notes) lines.push(`  note: ${n}`);
  return lines.join('\n');
}
