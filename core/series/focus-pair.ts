/**
 * Focus pair (optics.md section 4, way 1): two frames whose focus differs by a known step
 * resolve the sign of the tilt. With delta the local focus error of the first frame (positive =
 * sensor behind focus), q = sqrt(K) delta and z the astigmatic focal separation, the sizes are
 *   T_near = T0n + q^2 + (sqrt(K) z / 2)^2,  T_far = T0f + (q + sqrt(K) step)^2 + (sqrt(K) z / 2)^2,
 * fitted jointly over both star sets (the seeing may differ: two T0; defocus-fit.ts). The
 * single-frame twin solution (-q) no longer fits the second frame, so the plane is signed.
 * Without the f-number and pixel size, sqrt(K) step is fitted and the step itself calibrates
 * micrometres.
 *
 * The field coordinates are about the frame centre in half-diagonals, as in the through-focus
 * surface (focus-surface.ts): about an estimated optical centre the curvature term would trade
 * with the tilt, and that estimate is itself pulled by a tilt. The report speaks of best-focus
 * positions (DESIGN.md): a point's best focus is the first frame's position minus its focus
 * error, so the tilt and curvature are minus the fitted focus-error terms.
 */
import { analyzeField } from '../field/map.ts';
import type { Geometry } from '../field/geometry.ts';
import { axisDeg, axialStdDeg, rng, std } from '../field/stats.ts';
import { units } from '../diagnose/context.ts';
import { diagnoseTrailing } from '../diagnose/trailing.ts';
import { diagnoseComa } from '../diagnose/coma.ts';
import { correctedColumns } from '../diagnose/symmetric.ts';
import { fitDefocus, smartStarts, defaultStarts, qAt, chi2At, sizeAt, P, type DefocusData, type DefocusFit, type DefocusSpec } from '../diagnose/defocus-fit.ts';
import { acrossWords, fmt, fmtErr, tiltAdvice, tiltSides } from '../diagnose/words.ts';
import { sideName } from '../field/geometry.ts';
import type { Finding } from '../diagnose/types.ts';
import type { XY } from '../field/types.ts';
import { usage } from '../errors.ts';
import { checkFrame, checkSameSetup, fromAnalysis, type AnalysisLike, type FrameIdentity, type FrameInput } from './input.ts';
import type { FocusPairCorner, FocusPairResult } from './focus-pair-types.ts';

export type { FocusPairCorner, FocusPairResult } from './focus-pair-types.ts';

const BOOT = 24;

function frameData(f: FrameInput) {
  const fa = analyzeField(f.stars, { width: f.width, height: f.height, displayTopRow: f.displayTopRow });
  const tr = diagnoseTrailing(fa);
  const co = diagnoseComa(fa);
  return { fa, cols: correctedColumns(fa, co.correction, tr.sizeCorrection) };
}

/** Zone residual check (see FocusPairResult.modelCheck): 4 x 3 zones per frame, five or more stars each. */
function zoneCheck(data: DefocusData, params: Float64Array, fit: DefocusFit, g: Geometry): { zones: number; chi2: number; errorScale: number } {
  const bins = new Map<number, number[]>();
  for (let i = 0; i < data.n; i++) {
    if (!(fit.robust[i] > 0)) continue;
    const x = g.cx + data.u[i] * g.scale, y = g.cy + data.v[i] * g.scale;
    const c = Math.min(3, Math.max(0, Math.floor(((x + 0.5) / g.width) * 4)));
    const r = Math.min(2, Math.max(0, Math.floor(((y + 0.5) / g.height) * 3)));
    const k = (data.frame ? data.frame[i] : 0) * 12 + r * 4 + c;
    const list = bins.get(k) ?? [];
    list.push(data.T[i] - sizeAt(params, data, i));
    bins.set(k, list);
  }
  let chi2 = 0, zones = 0;
  for (const res of bins.values()) {
    if (res.length < 5) continue;
    const m = res.reduce((a, b) => a + b, 0) / res.length;
    const e = std(res) / Math.sqrt(res.length);
    if (!(e > 0)) continue;
    chi2 += (m / e) ** 2;
    zones++;
  }
  return { zones, chi2, errorScale: zones > 0 ? Math.sqrt(Math.max(1, chi2 / zones)) : 1 };
}

export interface FocusPairOptions {
  /** Let the astigmatic size term join the model when the data ask for it (default true). */
  astigmatism?: boolean;
}

export function focusPair(near: FrameInput, far: FrameInput, stepUm: number, opts: FocusPairOptions = {}): FocusPairResult {
  checkFrame(near, 'focus-pair NEAR');
  checkFrame(far, 'focus-pair FAR');
  if (!Number.isFinite(stepUm) || stepUm === 0) throw usage('focus-pair: --step must be a non-zero number of micrometres (the focus change from NEAR to FAR at the sensor)');
  // One camera at one setting; focusing changes the focal length by far less than 5 %.
  const setupNotes = checkSameSetup('focus-pair', [near, far], ['NEAR', 'FAR'], { scaleTolerance: 0.05 });
  const A = frameData(near);
  const B = frameData(far);
  if (A.cols.n < 20 || B.cols.n < 20) throw usage(`focus-pair: too few clean stars (${A.cols.n} and ${B.cols.n}; at least 20 each)`);
  const g: Geometry = A.fa.geom;
  const centre = { x: g.cx, y: g.cy };
  const u = units({ width: near.width, height: near.height, optics: near.optics });
  const n = A.cols.n + B.cols.n;
  // The seeing core's profile sets the adaptive moments' gain; the sharper frame shows it best.
  const medT = (c: typeof A.cols) => median(c.T);
  const sharper = medT(A.cols) <= medT(B.cols) ? A : B;
  const beta = sharper.fa.core.beta ?? null;
  const data: DefocusData = {
    n,
    u: new Float64Array(n), v: new Float64Array(n), T: new Float64Array(n), sig: new Float64Array(n), frame: new Uint8Array(n), beta,
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
  const plain: DefocusSpec = { tilt: true, curvature: true, pair: { stepQ } };
  const astSpec: DefocusSpec = { ...plain, astigmatism: true };
  // Starts: both signs of the first frame's single-frame solutions, plus the generic grid. The
  // astigmatic term starts off zero (its gradient vanishes there) and at the size of the blur.
  const single: DefocusData = { n: A.cols.n, u: data.u.subarray(0, A.cols.n), v: data.v.subarray(0, A.cols.n), T: data.T.subarray(0, A.cols.n), sig: data.sig.subarray(0, A.cols.n), frame: null, beta };
  const singles = smartStarts(single, { tilt: true, curvature: true, pair: null });
  const sStart = stepQ ?? Math.sign(stepUm) * Math.sqrt(Math.max(1e-6, Math.abs(median(B.cols.T) - median(A.cols.T))));
  const a4Start = 0.3 * Math.sqrt(Math.max(1e-6, median(A.cols.T)));
  const starts: Float64Array[] = [];
  for (const s0 of singles) {
    for (const sign of [1, -1]) {
      const p = Float64Array.from(s0);
      for (const j of [P.a0, P.a1, P.a2, P.a3]) p[j] *= sign;
      p[P.T0b] = p[P.T0];
      p[P.s] = sStart;
      p[P.a4] = a4Start;
      starts.push(p);
    }
  }
  starts.push(...defaultStarts(data, plain).map((p) => { p[P.s] = stepQ ?? sStart; p[P.a4] = a4Start; return p; }));
  const full0 = fitDefocus(data, plain, starts);
  if (!full0) throw usage('focus-pair: the focus model could not be fitted to these frames');
  // The astigmatic term joins the model when the data ask for it: under the plain fit's weights it
  // must lower chi^2 by 9 (3 sigma, one parameter). Near zero its gradient vanishes and the fit
  // degenerates, so a term the data do not ask for is left out rather than fitted at zero.
  const withAst = opts.astigmatism === false ? null : fitDefocus(data, astSpec, [Object.assign(Float64Array.from(full0.params), { [P.a4]: a4Start }), ...starts.slice(0, 4)], { robust: full0.robust, scatter: full0.scatter });
  const dchi2Ast = withAst ? Math.max(0, full0.chi2 - withAst.chi2) : 0;
  const astIncluded = !!withAst && dchi2Ast >= 9;
  const spec = astIncluded ? astSpec : plain;
  const full = astIncluded ? withAst! : full0;
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
  const check = zoneCheck(data, best, full, g);
  const scale2 = check.errorScale ** 2;
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
  const signD = Math.max(0, twinChi2 - full.chi2) / scale2;
  const noTiltSpec = { ...spec, tilt: false };
  const noTilt = fitDefocus(data, noTiltSpec, defaultStarts(data, noTiltSpec).map((p) => { p[P.s] = stepQ ?? sStart; p[P.a4] = a4Start; return p; }).concat([Float64Array.from(best)]), fixed);
  const dchi2 = noTilt ? Math.max(0, noTilt.chi2 - full.chi2) / scale2 : 0;
  // Bootstrap over stars of both frames.
  const rand = rng(99);
  const boot: Float64Array[] = [];
  for (let b = 0; b < BOOT; b++) {
    const pick = Int32Array.from({ length: n }, () => Math.floor(rand() * n));
    const take = (a: Float64Array) => Float64Array.from(pick, (i) => a[i]);
    const d: DefocusData = { n, u: take(data.u), v: take(data.v), T: take(data.T), sig: take(data.sig), frame: Uint8Array.from(pick, (i) => (data.frame as Uint8Array)[i]), beta };
    const f = fitDefocus(d, spec, [best], { robust: Float64Array.from(pick, (i) => full.robust[i]), scatter: full.scatter });
    if (f) boot.push(canon(f.params));
  }
  // Micrometres per q: from the optics, or from the fitted step.
  const sK = u.sqrtK ?? Math.abs(best[P.s] / stepUm);
  const es = check.errorScale;
  const toUm = (q: number) => q / sK;
  const errOf = (f: (p: Float64Array) => number) => es * std(boot.map(f));
  // Best focus = position - focus error: the report's tilt and curvature are minus the q terms.
  const acX = (p: Float64Array) => -toUm(p[P.a1] * (g.width / g.scale));
  const acY = (p: Float64Array) => -toUm(p[P.a2] * (g.height / g.scale));
  const acrossX = acX(best), acrossY = acY(best);
  const errX = errOf(acX), errY = errOf(acY);
  const axis = axisDeg((Math.atan2(acrossY / g.height, acrossX / g.width) * 180) / Math.PI);
  const axisSpread = axialStdDeg(boot.map((p) => (Math.atan2(acY(p) / g.height, acX(p) / g.width) * 180) / Math.PI), axis);
  const gradUmPerPx = toUm(Math.hypot(best[P.a1], best[P.a2]) / g.scale);
  const gradErr = errOf((p) => toUm(Math.hypot(p[P.a1], p[P.a2]) / g.scale));
  const pMm = u.pixelSizeUm ? u.pixelSizeUm / 1000 : null;
  const cornerPts: [number, number][] = [[-0.5, -0.5], [g.width - 0.5, -0.5], [-0.5, g.height - 0.5], [g.width - 0.5, g.height - 0.5]];
  const corners: FocusPairCorner[] = cornerPts.map(([x, y]) => {
    const uu = (x - centre.x) / g.scale;
    const vv = (y - centre.y) / g.scale;
    return {
      name: sideName(g, x - g.cx, y - g.cy), xPx: x, yPx: y,
      defocusUm: toUm(qAt(best, uu, vv)), defocusErrUm: errOf((p) => toUm(qAt(p, uu, vv))),
    };
  });
  // A corner lies at u^2 + v^2 = 1 for a full frame (for an image circle: its rim).
  const cornerUm = -toUm(best[P.a3]);
  const cornerErrUm = errOf((p) => -toUm(p[P.a3]));
  const astUm = (p: Float64Array) => (2 * Math.abs(p[P.a4])) / sK;
  const astErr = astIncluded ? errOf(astUm) : null;
  const astValue = astIncluded ? astUm(best) : withAst ? astUm(canon(withAst.params)) : 0;
  const significant = dchi2 >= 16 && Math.hypot(acrossX, acrossY) > 3 * Math.hypot(errX, errY);
  const signResolved = signD >= 9;
  const notes: string[] = [...setupNotes];
  if (u.sqrtK === null) notes.push('the f-number or pixel size is unknown; micrometres come from the focus step itself (its fitted effect on the star sizes)');
  if (es > 1.5) notes.push(`the focus model leaves zones off by more than their noise (errors scaled up ${fmt(es, 1)} times): coma, vignetting or a focus surface more complex than tilt, curvature and astigmatism; a focus series (through-focus) maps it zone by zone`);
  const result: FocusPairResult = {
    schema: 'skyloupe.focuspair/1',
    stepUm,
    signResolved,
    signSignificance: Math.sqrt(signD),
    tilt: {
      significant, significance: Math.sqrt(dchi2),
      acrossFrameUm: { x: acrossX, y: acrossY }, acrossFrameErrUm: { x: errX, y: errY },
      axisDeg: axis, axisErrDeg: Number.isFinite(axisSpread) ? es * axisSpread : null,
      signResolved,
      tiltMrad: pMm ? gradUmPerPx / pMm : null, tiltErrMrad: pMm ? gradErr / pMm : null,
    },
    defocus: { centreUm: toUm(best[P.a0]), centreErrUm: errOf((p) => toUm(p[P.a0])), corners },
    curvature: { cornerUm, cornerErrUm, significant: Math.abs(cornerUm) >= 3 * cornerErrUm },
    astigmatism: { included: astIncluded, magnitudeUm: astValue, magnitudeErrUm: astErr, significant: astIncluded && dchi2Ast / scale2 >= 9 && astValue >= 3 * (astErr ?? Infinity) },
    modelCheck: check,
    moffatBeta: beta,
    stepScale: stepQ !== null ? 1 : null,
    centrePx: { x: centre.x, y: centre.y },
    starsUsed: { near: A.cols.n, far: B.cols.n },
    note: notes.length ? notes.join('; ') : null,
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
  const across = acrossWords(g, t.acrossFrameUm, t.acrossFrameErrUm);
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
      message: `No significant tilt: best focus changes by ${across}.`,
      numbers: { acrossWidthUm: t.acrossFrameUm.x, acrossHeightUm: t.acrossFrameUm.y },
    }];
  }
  const sides = tiltSides(g, t.acrossFrameUm);
  const shim = t.tiltMrad !== null ? ` That is ${fmt(t.tiltMrad, 2)} µm per mm: about ${fmt(t.tiltMrad * 50, 0)} µm of shim at the edge of a 50 mm ring.` : '';
  return [{
    code: 'FOCUS_PAIR_TILT', severity: 'major',
    message: `Signed tilt: ${tiltAdvice(g, t)}. Best focus changes by ${across} (sign settled at ${fmt(r.signSignificance, 1)} sigma).${shim} A mirror or flip in the image path swaps sides: check which physical side of the camera that is.`,
    numbers: { acrossWidthUm: t.acrossFrameUm.x, acrossHeightUm: t.acrossFrameUm.y, axisDeg: t.axisDeg, tiltMrad: t.tiltMrad, towardLens: sides.toward, awayFromLens: sides.away },
  }];
}

/** CLI-facing: `focus-pair NEAR FAR --step UM` on analyses. */
export function runFocusPair(near: AnalysisLike, far: AnalysisLike, stepUm: number, labels: { near?: string; far?: string } = {}, ids: { near?: FrameIdentity | null; far?: FrameIdentity | null } = {}): FocusPairResult {
  return focusPair(fromAnalysis(near, labels.near, ids.near), fromAnalysis(far, labels.far, ids.far), stepUm);
}

export function formatFocusPair(r: FocusPairResult): string {
  const t = r.tilt;
  const lines = [
    `Focus pair (step ${fmt(r.stepUm, 1)} µm): sign ${r.signResolved ? 'resolved' : 'NOT resolved'} (${fmt(r.signSignificance, 1)} sigma)`,
    `  tilt (change of best focus): across the width ${fmt(t.acrossFrameUm.x, 1)} ± ${fmtErr(t.acrossFrameErrUm.x)} µm, across the height ${fmt(t.acrossFrameUm.y, 1)} ± ${fmtErr(t.acrossFrameErrUm.y)} µm, axis ${fmt(Math.abs(t.axisDeg) < 0.5 ? 0 : t.axisDeg, 0)}°${t.significant ? '' : ' (not significant)'}`,
    `  curvature: corners ${fmt(r.curvature.cornerUm, 1)} ± ${fmtErr(r.curvature.cornerErrUm)} µm from the centre${r.curvature.significant ? '' : ' (not significant)'}; astigmatism ${r.astigmatism.included ? `${fmt(r.astigmatism.magnitudeUm, 1)} ± ${fmtErr(r.astigmatism.magnitudeErrUm)} µm at the corners${r.astigmatism.significant ? '' : ' (not significant)'}` : 'not needed by the fit'}`,
    `  first frame's focus error: centre ${fmt(r.defocus.centreUm, 1)} µm; corners ${r.defocus.corners.map((c) => `${c.name} ${fmt(c.defocusUm, 1)}`).join(', ')} µm (positive = sensor behind focus)`,
    ...r.findings.map((f) => `  ${f.message}`),
  ];
  if (r.note) lines.push(`  note: ${r.note}`);
  return lines.join('\n');
}
