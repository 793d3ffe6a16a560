/**
 * Focus pair (optics.md section 4, way 1): two frames whose focus differs by a known step
 * resolve the sign of the tilt. With delta the local focus error of the first frame (positive =
 * sensor behind focus) and q = sqrt(K) delta, the sizes are
 *   T_near = T0n + q^2,  T_far = T0f + (q + sqrt(K) step)^2,
 * fitted jointly over both star sets (the seeing may differ: two T0). The single-frame twin
 * solution (-q) no longer fits the second frame, so the plane is signed. Without the f-number
 * and pixel size, sqrt(K) step is fitted and the step itself calibrates micrometres.
 */
import { analyzeField } from '../field/map.ts';
import { sideName, type Geometry } from '../field/geometry.ts';
import { axisDeg, rng, std } from '../field/stats.ts';
import { units } from '../diagnose/context.ts';
import { diagnoseTrailing } from '../diagnose/trailing.ts';
import { diagnoseComa } from '../diagnose/coma.ts';
import { correctedColumns } from '../diagnose/symmetric.ts';
import { fitDefocus, smartStarts, defaultStarts, qAt, chi2At, P, type DefocusData, type DefocusFit, type DefocusSpec } from '../diagnose/defocus-fit.ts';
import { fmt } from '../diagnose/words.ts';
import type { Finding } from '../diagnose/types.ts';
import type { XY } from '../field/types.ts';
import { usage } from '../errors.ts';
import { checkFrame, fromAnalysis, type AnalysisLike, type FrameInput } from './input.ts';
import type { FocusPairCorner, FocusPairResult } from './focus-pair-types.ts';

export type { FocusPairCorner, FocusPairResult } from './focus-pair-types.ts';

const BOOT = 24;

function frameData(f: FrameInput) {
  const fa = analyzeField(f.stars, { width: f.width, height: f.height, displayTopRow: f.displayTopRow });
  const tr = diagnoseTrailing(fa);
  const co = diagnoseComa(fa);
  return { fa, cols: correctedColumns(fa, co.correction, tr.sizeCorrection) };
}

export function focusPair(near: FrameInput, far: FrameInput, stepUm: number): FocusPairResult {
  checkFrame(near, 'focus-pair NEAR');
  checkFrame(far, 'focus-pair FAR');
  if (!Number.isFinite(stepUm) || stepUm === 0) throw usage('focus-pair: --step must be a non-zero number of micrometres (the focus change from NEAR to FAR at the sensor)');
  if (near.width !== far.width || near.height !== far.height) throw usage(`focus-pair: the frames differ in size (${near.width}x${near.height} and ${far.width}x${far.height})`);
  const A = frameData(near);
  const B = frameData(far);
  if (A.cols.n < 20 || B.cols.n < 20) throw usage(`focus-pair: too few clean stars (${A.cols.n} and ${B.cols.n}; at least 20 each)`);
  const g: Geometry = A.fa.geom;
  const centre = A.fa.centre;
  const u = units({ width: near.width, height: near.height, optics: near.optics });
  const n = A.cols.n + B.cols.n;
  const data: DefocusData = {
    n,
    u: new Float64Array(n), v: new Float64Array(n), T: new Float64Array(n), sig: new Float64Array(n), frame: new Uint8Array(n),
  };
  let k = 0;
  for (const [c, fr] of [[A.cols, 0], [B.cols, 1]] as const) {
    for (let i = 0; i < c.n; i++, k++) {
      (data.u as Float64Array)[k] = (c.x[i] - centre.x) / g.scale;
      (data.v as Float64Array)[k] = (c.y[i] - centre.y) / g.scale;
      (data.T as Float64Array)[k] = c.T[i];
      (data.sig as Float64Array)[k] = c.sigT[i];
      (data.frame as Uint8Array)[k] = fr;
    }
  }
  const stepQ = u.sqrtK !== null ? u.sqrtK * stepUm : null;
  const spec: DefocusSpec = { tilt: true, curvature: true, pair: { stepQ } };
  // Starts: both signs of the first frame's single-frame solutions, plus the generic grid.
  const single: DefocusData = { n: A.cols.n, u: data.u.subarray(0, A.cols.n), v: data.v.subarray(0, A.cols.n), T: data.T.subarray(0, A.cols.n), sig: data.sig.subarray(0, A.cols.n), frame: null };
  const singles = smartStarts(single, { tilt: true, curvature: true, pair: null });
  const sStart = stepQ ?? Math.sign(stepUm) * Math.sqrt(Math.max(1e-6, Math.abs(median(B.cols.T) - median(A.cols.T))));
  const starts: Float64Array[] = [];
  for (const s0 of singles) {
    for (const sign of [1, -1]) {
      const p = Float64Array.from(s0);
      for (const j of [P.a0, P.a1, P.a2, P.a3]) p[j] *= sign;
      p[P.T0b] = p[P.T0];
      p[P.s] = sStart;
      starts.push(p);
    }
  }
  starts.push(...defaultStarts(data, spec).map((p) => { p[P.s] = stepQ ?? sStart; return p; }));
  const full = fitDefocus(data, spec, starts);
  if (!full) throw usage('focus-pair: the focus model could not be fitted to these frames');
  const fixed = { robust: full.robust, scatter: full.scatter };
  // Keep the step's sign (the model is symmetric under a -> -a, s -> -s when s is free).
  const canon = (p: Float64Array) => {
    if (stepQ === null && Math.sign(p[P.s]) !== Math.sign(stepUm)) {
      const o = Float64Array.from(p);
      for (const j of [P.a0, P.a1, P.a2, P.a3, P.s]) o[j] = -o[j];
      return o;
    }
    return p;
  };
  const best = canon(full.params);
  // Twin: tilt and defocus terms flipped, refitted; how much worse it fits tells the sign's strength.
  const twinStart = Float64Array.from(best);
  for (const j of [P.a0, P.a1, P.a2, P.a3]) twinStart[j] = -twinStart[j];
  // With a fitted step, hold it at its value (its sign is the known direction of the step).
  const twinSpec: DefocusSpec = stepQ === null ? { ...spec, pair: { stepQ: best[P.s] } } : spec;
  const twinFits = [twinStart, ...starts.filter((p) => p[P.a1] * best[P.a1] + p[P.a2] * best[P.a2] < 0)]
    .map((st) => fitDefocus(data, twinSpec, [Object.assign(Float64Array.from(st), { [P.s]: best[P.s] })], fixed))
    .filter((f): f is DefocusFit => !!f && f.params[P.a1] * best[P.a1] + f.params[P.a2] * best[P.a2] < 0);
  // No local minimum on the twin side: the raw twin point bounds how badly it fits.
  const twinChi2 = twinFits.length ? Math.min(...twinFits.map((f) => f.chi2)) : chi2At(data, twinStart, full);
  const signD = Math.max(0, twinChi2 - full.chi2);
  const noTilt = fitDefocus(data, { ...spec, tilt: false }, defaultStarts(data, { ...spec, tilt: false }).map((p) => { p[P.s] = stepQ ?? sStart; return p; }).concat([Float64Array.from(best)]), fixed);
  const dchi2 = noTilt ? Math.max(0, noTilt.chi2 - full.chi2) : 0;
  // Bootstrap over stars of both frames.
  const rand = rng(99);
  const boot: Float64Array[] = [];
  for (let b = 0; b < BOOT; b++) {
    const pick = Int32Array.from({ length: n }, () => Math.floor(rand() * n));
    const take = (a: Float64Array) => Float64Array.from(pick, (i) => a[i]);
    const d: DefocusData = { n, u: take(data.u), v: take(data.v), T: take(data.T), sig: take(data.sig), frame: Uint8Array.from(pick, (i) => (data.frame as Uint8Array)[i]) };
    const f = fitDefocus(d, spec, [best], { robust: Float64Array.from(pick, (i) => full.robust[i]), scatter: full.scatter });
    if (f) boot.push(canon(f.params));
  }
  // Micrometres per q: from the optics, or from the fitted step.
  const sK = u.sqrtK ?? Math.abs(best[P.s] / stepUm);
  const toUm = (q: number) => q / sK;
  const acrossX = toUm(best[P.a1] * (g.width / g.scale));
  const acrossY = toUm(best[P.a2] * (g.height / g.scale));
  const bx = boot.map((p) => toUm(p[P.a1] * (g.width / g.scale)));
  const by = boot.map((p) => toUm(p[P.a2] * (g.height / g.scale)));
  const uphill = (Math.atan2(best[P.a2], best[P.a1]) * 180) / Math.PI;
  const axis = axisDeg(uphill);
  const axisErr = boot.length > 2 ? std(boot.map((p) => axisDeg((Math.atan2(p[P.a2], p[P.a1]) * 180) / Math.PI - axis))) : null;
  const gradUmPerPx = toUm(Math.hypot(best[P.a1], best[P.a2]) / g.scale);
  const gradErr = std(boot.map((p) => toUm(Math.hypot(p[P.a1], p[P.a2]) / g.scale)));
  const pMm = u.pixelSizeUm ? u.pixelSizeUm / 1000 : null;
  const cornerPts: [number, number][] = [[-0.5, -0.5], [g.width - 0.5, -0.5], [-0.5, g.height - 0.5], [g.width - 0.5, g.height - 0.5]];
  const corners: FocusPairCorner[] = cornerPts.map(([x, y]) => {
    const uu = (x - centre.x) / g.scale;
    const vv = (y - centre.y) / g.scale;
    return {
      name: sideName(g, x - g.cx, y - g.cy), xPx: x, yPx: y,
      defocusUm: toUm(qAt(best, uu, vv)), defocusErrUm: std(boot.map((p) => toUm(qAt(p, uu, vv)))),
    };
  });
  const significant = dchi2 >= 16 && Math.hypot(acrossX, acrossY) > 3 * Math.hypot(std(bx), std(by));
  const signResolved = signD >= 9;
  const result: FocusPairResult = {
    schema: 'skyloupe.focuspair/1',
    stepUm,
    signResolved,
    signSignificance: Math.sqrt(signD),
    tilt: {
      significant, significance: Math.sqrt(dchi2),
      acrossFrameUm: { x: acrossX, y: acrossY }, acrossFrameErrUm: { x: std(bx), y: std(by) },
      axisDeg: axis, axisErrDeg: axisErr, uphillDeg: ((uphill % 360) + 360) % 360,
      tiltMrad: pMm ? gradUmPerPx / pMm : null, tiltErrMrad: pMm ? gradErr / pMm : null,
    },
    defocus: { centreUm: toUm(best[P.a0]), centreErrUm: std(boot.map((p) => toUm(p[P.a0]))), corners },
    curvatureUm: toUm(best[P.a3]),
    curvatureErrUm: std(boot.map((p) => toUm(p[P.a3]))),
    stepScale: stepQ !== null ? 1 : null,
    centrePx: { x: centre.x, y: centre.y },
    starsUsed: { near: A.cols.n, far: B.cols.n },
    note: u.sqrtK === null ? 'the f-number or pixel size is unknown; micrometres come from the focus step itself (its fitted effect on the star sizes)' : null,
    findings: [],
  };
  result.findings = pairFindings(result, g);
  return result;
}

function median(a: Float64Array): number {
  const s = Float64Array.from(a).sort();
  return s.length ? s[s.length >> 1] : NaN;
}

function pairFindings(r: FocusPairResult, g: Geometry): Finding[] {
  const t = r.tilt;
  if (!r.signResolved) {
    return [{
      code: 'FOCUS_PAIR_UNRESOLVED', severity: 'minor',
      message: `The two frames do not settle the tilt's sign (the opposite plane fits almost as well, ${fmt(r.signSignificance, 1)} sigma). Use a larger focus step (several times the critical focus zone) or frames with more stars.`,
      numbers: { signSignificance: r.signSignificance, stepUm: r.stepUm },
    }];
  }
  if (!t.significant) {
    return [{
      code: 'FOCUS_PAIR_LEVEL', severity: 'info',
      message: `No significant tilt: the focus changes by ${fmt(t.acrossFrameUm.x, 1)} +- ${fmt(t.acrossFrameErrUm.x, 1)} um across the width and ${fmt(t.acrossFrameUm.y, 1)} +- ${fmt(t.acrossFrameErrUm.y, 1)} um across the height.`,
      numbers: { acrossWidthUm: t.acrossFrameUm.x, acrossHeightUm: t.acrossFrameUm.y },
    }];
  }
  const farSide = sideName(g, Math.abs(Math.cos((t.uphillDeg * Math.PI) / 180)) > 0.38 ? Math.sign(Math.cos((t.uphillDeg * Math.PI) / 180)) : 0, Math.abs(Math.sin((t.uphillDeg * Math.PI) / 180)) > 0.38 ? Math.sign(Math.sin((t.uphillDeg * Math.PI) / 180)) : 0);
  const nearSide = sideName(g, Math.abs(Math.cos((t.uphillDeg * Math.PI) / 180)) > 0.38 ? -Math.sign(Math.cos((t.uphillDeg * Math.PI) / 180)) : 0, Math.abs(Math.sin((t.uphillDeg * Math.PI) / 180)) > 0.38 ? -Math.sign(Math.sin((t.uphillDeg * Math.PI) / 180)) : 0);
  const total = Math.hypot(t.acrossFrameUm.x, t.acrossFrameUm.y);
  const shim = t.tiltMrad !== null ? ` That is ${fmt(t.tiltMrad, 2)} um per mm: about ${fmt(t.tiltMrad * 50, 0)} um of shim at the edge of a 50 mm ring.` : '';
  return [{
    code: 'FOCUS_PAIR_TILT', severity: total > 0 ? 'major' : 'info',
    message: `Signed tilt: the ${farSide} side of the frame lies farther from the lens than the ${nearSide} side (focus changes by ${fmt(t.acrossFrameUm.x, 1)} +- ${fmt(t.acrossFrameErrUm.x, 1)} um across the width and ${fmt(t.acrossFrameUm.y, 1)} +- ${fmt(t.acrossFrameErrUm.y, 1)} um across the height; sign settled at ${fmt(r.signSignificance, 1)} sigma). Shim the ${nearSide} side outward, or bring the ${farSide} side in.${shim} Check which physical side of the camera that is: a mirror or flip in the image path swaps sides.`,
    numbers: { acrossWidthUm: t.acrossFrameUm.x, acrossHeightUm: t.acrossFrameUm.y, axisDeg: t.axisDeg, uphillDeg: t.uphillDeg, tiltMrad: t.tiltMrad, farSide, nearSide },
  }];
}

/** CLI-facing: `focus-pair NEAR FAR --step UM` on analyses. */
export function runFocusPair(near: AnalysisLike, far: AnalysisLike, stepUm: number): FocusPairResult {
  return focusPair(fromAnalysis(near), fromAnalysis(far), stepUm);
}

export function formatFocusPair(r: FocusPairResult): string {
  const t = r.tilt;
  const lines = [
    `Focus pair (step ${fmt(r.stepUm, 1)} um): sign ${r.signResolved ? 'resolved' : 'NOT resolved'} (${fmt(r.signSignificance, 1)} sigma)`,
    `  tilt across width ${fmt(t.acrossFrameUm.x, 1)} +- ${fmt(t.acrossFrameErrUm.x, 1)} um, across height ${fmt(t.acrossFrameUm.y, 1)} +- ${fmt(t.acrossFrameErrUm.y, 1)} um, axis ${fmt(t.axisDeg, 0)} deg${t.significant ? '' : ' (not significant)'}`,
    `  first frame: centre ${fmt(r.defocus.centreUm, 1)} um; corners ${r.defocus.corners.map((c) => `${c.name} ${fmt(c.defocusUm, 1)}`).join(', ')} um (positive = behind focus)`,
  ];
  if (r.note) lines.push(`  note: ${r.note}`);
  return lines.join('\n');
}
