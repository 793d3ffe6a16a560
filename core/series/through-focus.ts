/**
 * Through focus: three or more frames at known focuser positions (µm at the sensor, larger = the
 * sensor farther from the lens). Stars are followed from frame to frame (match.ts); in each zone
 * of the field the widths of its stars against position give focus curves (focus-curve.ts): the
 * HFD's vertex is the zone's best focus, the FWHM's is reported beside it, and the second
 * moments along and across the radius give the tangential and sagittal foci (astigmatism: at the
 * sagittal focus the image is a radial line, so the width across the radius vanishes there;
 * optics.md §3). The zones' best foci make the focus surface (focus-surface.ts): tilt, curvature,
 * the corners' moves, the best overall focus and the best compromise over the field. The light
 * radii of the stars near the centre give the spherical aberration (spherical.ts).
 */
import { geometry, sideName, type Geometry } from '../field/geometry.ts';
import { adaptiveDims } from '../field/zones.ts';
import { isUsable } from '../field/quantities.ts';
import { axisDeg, median, madSigma } from '../field/stats.ts';
import { acrossWords, fmt, fmtErr, tiltAdvice, tiltSides } from '../diagnose/words.ts';
import type { Finding } from '../diagnose/types.ts';
import { usage } from '../errors.ts';
import { checkFrame, checkSameSetup, fromAnalysis, type AnalysisLike, type FrameIdentity, type FrameInput } from './input.ts';
import { matchSeries } from './match.ts';
import { curveAt, fitCurves, starVertex, vertexOf, type CurveFit, type Vertex, type ZoneCurve } from './focus-curve.ts';
import { drawParameters, fitSurface, meanStd, surfaceAt, surfaceRange } from './focus-surface.ts';
import { fitSpherical, type SphericalFit } from './spherical.ts';
import { PROFILE_FRACTIONS, type StarProfile } from './profile.ts';
import type { StarStamp } from './frame-extras.ts';
import type { Star } from '../stars/types.ts';

export interface FocusFrameInput extends FrameInput {
  /** Focuser position, µm at the sensor (larger = sensor farther from the lens). */
  readonly positionUm: number;
  /** Light radii of the stars (aligned with stars), from frame-extras.ts; without them no spherical aberration. */
  readonly profiles?: readonly (StarProfile | null)[] | null;
  /** Cut-outs of some stars, for the pictures. */
  readonly stamps?: readonly StarStamp[] | null;
}

export interface ThroughFocusOptions {
  /** Wavelength for the critical focus zone, nm. Default 550. */
  wavelengthNm?: number;
  /** Central obstruction ratio of the optics (0 for lenses and refractors). Default 0. */
  obstruction?: number;
  /** The positions as given (focuser steps) and the µm per step, when a step unit was used. */
  stepUnitUm?: number | null;
  positionsGiven?: readonly number[] | null;
  /** Adjusters of the sensor's tilt plate (frame pixel coordinates; may lie outside the frame). Default: the four corners. */
  adjusters?: readonly { name: string; xPx: number; yPx: number }[] | null;
  /** Thread pitch of the adjusters, mm per turn: moves are also given in turns. */
  screwPitchMm?: number | null;
}

export interface CurveSummary {
  bestFocusUm: number | null;
  errUm: number | null;
  /** Width at best focus, px, and the asymptotic slope, px per µm. */
  widthAtFocusPx: number | null;
  slopePxPerUm: number | null;
  /** w^2 = a + b (P - p0) + c (P - p0)^2, px^2 (the frames' shared seeing terms aside). */
  coef: [number, number, number] | null;
  p0Um: number;
}

export interface ThroughFocusZone {
  col: number;
  row: number;
  name: string;
  centrePx: { x: number; y: number };
  /** Distance from the frame centre in half-diagonals (a corner = 1). */
  fieldHeight: number;
  stars: number;
  /**
   * Best focus: the vertex of the rms-radius curve, sqrt(second moments), which is exactly the
   * cone-and-core hyperbola (the HFD's and FWHM's are beside it in hfd / fwhm; with spherical
   * aberration the three differ, each metric favouring other zones of the pupil).
   */
  bestFocusUm: number | null;
  errUm: number | null;
  /** The best focus lies within the series' positions. */
  insideSeries: boolean;
  /** rms radius sqrt(Ixx + Iyy), px: its curve, HFD's and FWHM's. */
  rms: CurveSummary;
  hfd: CurveSummary;
  fwhm: CurveSummary;
  /** Foci of the width along the radius (tangential focus) and across it (sagittal focus). */
  tangentialFocusUm: number | null;
  tangentialErrUm: number | null;
  sagittalFocusUm: number | null;
  sagittalErrUm: number | null;
  /** Per frame: median rms radius, HFD and FWHM of the zone's stars, px, with errors (null = too few stars). */
  rmsPx: (number | null)[];
  rmsErrPx: (number | null)[];
  hfdPx: (number | null)[];
  hfdErrPx: (number | null)[];
  fwhmPx: (number | null)[];
  fwhmErrPx: (number | null)[];
}

export interface ThroughFocusStar {
  x: number;
  y: number;
  zone: number;
  bestFocusUm: number | null;
  errUm: number | null;
  /** HFD and FWHM per frame, px (null where the star was not measured clean). */
  hfdPx: (number | null)[];
  fwhmPx: (number | null)[];
}

export interface StampSeries {
  zone: number;
  zoneName: string;
  star: { x: number; y: number };
  frames: ({ positionUm: number; x0: number; y0: number; w: number; h: number; scale: number; values: (number | null)[] } | null)[];
}

export interface ThroughFocusResult {
  schema: 'skyloupe.throughfocus/1';
  positionsUm: number[];
  stepUnitUm: number | null;
  positionsGiven: number[] | null;
  frames: { label: string | null; positionUm: number; stars: number; tracked: number; shiftPx: { x: number; y: number } }[];
  referenceFrame: number;
  frame: { width: number; height: number; displayTopRow: 'first' | 'last' };
  optics: { fNumber: number | null; fNumberSource: string | null; pixelSizeUm: number | null; obstruction: number };
  grid: { cols: number; rows: number };
  zones: ThroughFocusZone[];
  stars: ThroughFocusStar[];
  surface: {
    centrePx: { x: number; y: number };
    scalePx: number;
    /** F = centreUm + xUm u + yUm v + curvatureUm (u^2 + v^2), u, v in half-diagonals from the frame centre. */
    coef: { centreUm: number; xUm: number; yUm: number; curvatureUm: number };
    errors: { centreUm: number; xUm: number; yUm: number; curvatureUm: number };
    zonesUsed: number;
    errorScale: number;
  } | null;
  tilt: {
    /** Change of best-focus position across the width (right minus left, +x) and height (+y minus y = 0), µm. */
    acrossFrameUm: { x: number; y: number };
    acrossFrameErrUm: { x: number; y: number };
    /** Direction of steepest change of best focus, degrees mod 180 (pixel axes). */
    axisDeg: number;
    axisErrDeg: number | null;
    /** A focus series always settles the sign (the field shared with the single frame and the focus pair). */
    signResolved: true;
    significant: boolean;
    significance: number;
    /** µm of best-focus change per mm across the sensor = mrad (optics.md §4), when the pixel size is known. */
    tiltMrad: number | null;
    tiltErrMrad: number | null;
    /** How far each corner (or adjuster) must move, µm: positive = away from the lens, keeping the centre. */
    moves: { name: string; xPx: number; yPx: number; moveUm: number; moveErrUm: number; turns: number | null }[];
  } | null;
  curvature: { cornerUm: number; cornerErrUm: number; significant: boolean; radiusMm: number | null } | null;
  astigmatism: {
    /** Sagittal minus tangential focus at the corners (field height 1), µm: > 0 = the sagittal focus lies farther from the lens. */
    separationUm: number;
    separationErrUm: number;
    significant: boolean;
    zonesUsed: number;
  } | null;
  spherical: {
    kind: 'under-corrected' | 'over-corrected' | 'none';
    /** Marginal minus paraxial focus, µm (< 0: marginal rays focus nearer the lens). */
    longitudinalUm: number | null;
    errUm: number | null;
    significant: boolean;
    /** The marginal ray's miss at the paraxial focus, µm (LSA / 2N), and the smallest blur circle (TSA / 2), µm and px. */
    transverseUm: number | null;
    blurDiameterUm: number | null;
    blurDiameterPx: number | null;
    /** Groups of stars near the centre (by their own best focus) whose light radii were fitted. */
    groupsUsed: number;
    note: string | null;
  };
  /** Best focus at the frame centre, on average over the frame, and the one that keeps the worst point sharpest. */
  centreFocusUm: number | null;
  centreFocusErrUm: number | null;
  bestFocusUm: number | null;
  bestFocusErrUm: number | null;
  bestFieldFocusUm: number | null;
  bestFieldFocusErrUm: number | null;
  /** Spread of best focus over the frame (highest minus lowest), µm; at bestFieldFocusUm every point is within half of it. */
  fieldFocusSpreadUm: number | null;
  criticalFocusZone: { halfWidthUm: number; wavelengthNm: number; fNumber: number; fNumberSource: string } | null;
  /** Measured blur growth per µm of travel against the f-number's (1 = the positions are the sensor's focal shifts). */
  travelScale: { value: number; err: number } | null;
  stamps: StampSeries[];
  notes: string[];
  findings: Finding[];
}

const MIN_ZONE_STARS = 3;

function medErr(v: number[]): { m: number; e: number } {
  const a = v.filter(Number.isFinite);
  if (a.length < MIN_ZONE_STARS) return { m: NaN, e: NaN };
  const m = median(a);
  const s = madSigma(a, m);
  // The median's standard error for normal data (1.2533 sigma / sqrt(n)); a floor for identical values.
  return { m, e: Math.max(1.2533 * s / Math.sqrt(a.length), 1e-3 * Math.abs(m), 1e-6) };
}

const nn = (v: number) => (Number.isFinite(v) ? v : null);

function summary(z: ZoneCurve | null, v: Vertex | null): CurveSummary {
  if (!z || !v) return { bestFocusUm: null, errUm: null, widthAtFocusPx: null, slopePxPerUm: null, coef: null, p0Um: 0 };
  return {
    bestFocusUm: v.hasMinimum ? nn(v.focus) : null,
    errUm: v.hasMinimum ? nn(v.focusErr) : null,
    widthAtFocusPx: nn(v.w0),
    slopePxPerUm: nn(v.slope),
    coef: [z.coef[0], z.coef[1], z.coef[2]],
    p0Um: z.p0,
  };
}

export function throughFocus(inputs: readonly FocusFrameInput[], opts: ThroughFocusOptions = {}): ThroughFocusResult {
  if (!Array.isArray(inputs) || inputs.length < 3) {
    throw usage(inputs?.length === 2
      ? 'through-focus: two frames cannot show a focus curve; for two frames a known step apart use focus-pair NEAR FAR --step UM, or add a third frame (five or more are better)'
      : 'through-focus: give at least three frames at different focuser positions (--at UM=FRAME), five or more across focus are better');
  }
  inputs.forEach((f, i) => {
    checkFrame(f, `through-focus frame ${i + 1}`);
    if (!Number.isFinite(f.positionUm)) throw usage(`through-focus: frame ${f.label ?? i + 1} has no numeric position`);
  });
  const distinct = new Set(inputs.map((f) => f.positionUm));
  if (distinct.size === 1) throw usage(`through-focus: every frame is at the same position (${inputs[0].positionUm} um): step the focuser between frames`);
  if (distinct.size < 3) throw usage(`through-focus: the frames sit at only ${distinct.size} different positions; a focus curve needs three or more (five or more across focus are better)`);
  // One camera at one setting; focusing changes the focal length by far less than 5 %.
  const setupNotes = checkSameSetup('through-focus', inputs, inputs.map((f) => `the frame at ${f.positionUm} µm`), { scaleTolerance: 0.05 });
  const W = inputs[0].width, H = inputs[0].height;
  const order = inputs.map((_, i) => i).sort((a, b) => inputs[a].positionUm - inputs[b].positionUm);
  const frames = order.map((i) => inputs[i]);
  const P = frames.map((f) => f.positionUm);
  const nf = frames.length;
  const g = geometry(W, H, frames[0].displayTopRow ?? 'first');
  const wavelengthNm = opts.wavelengthNm ?? 550;
  const eps = opts.obstruction ?? 0;
  const notes: string[] = [...setupNotes];

  for (const f of frames) {
    const clean = f.stars.filter((s: Star) => s.flags.length === 0).length;
    if (clean < 5) throw usage(`through-focus: ${f.label ?? `the frame at ${f.positionUm} um`} has ${clean} usable star${clean === 1 ? '' : 's'}: clouded, or too far out of focus; leave it out or take it nearer focus`);
  }
  // Follow the stars.
  const match = matchSeries(frames.map((f) => f.stars));
  if (match.unmatched.length) {
    const u = match.unmatched[0];
    const name = (k: number) => frames[k].label ?? `frame at ${frames[k].positionUm} um`;
    throw usage(`through-focus: ${name(u.frame)} does not show the same stars as ${name(match.reference)} (${u.shift ? `${u.shift.votes} of ${u.shift.of}` : 'none of the'} bright stars line up under any shift up to 40 px): frames of different fields, or a large shift or rotation between them`);
  }
  const tracks = match.tracks
    .map((t) => Int32Array.from(t, (j, f) => (j >= 0 && isUsable(frames[f].stars[j]) ? j : -1)))
    .filter((t) => t.filter((j) => j >= 0).length >= 3);
  if (tracks.length < 10) throw usage(`through-focus: only ${tracks.length} stars are measured clean in three or more frames (at least 10 are needed): frames too far out of focus, or too few stars`);

  // Zones.
  const pos = tracks.map((t) => {
    let sx = 0, sy = 0, n = 0;
    t.forEach((j, f) => { if (j >= 0) { sx += frames[f].stars[j].x; sy += frames[f].stars[j].y; n++; } });
    return { x: sx / n, y: sy / n };
  });
  const dims = adaptiveDims(tracks.length, g, 25);
  const cols = Math.min(7, dims.cols), rows = Math.min(5, dims.rows);
  const zoneOf = pos.map((p) => {
    const c = Math.min(cols - 1, Math.max(0, Math.floor(((p.x + 0.5) / W) * cols)));
    const r = Math.min(rows - 1, Math.max(0, Math.floor(((p.y + 0.5) / H) * rows)));
    return r * cols + c;
  });
  const nz = cols * rows;
  const members: number[][] = Array.from({ length: nz }, () => []);
  zoneOf.forEach((z, i) => members[z].push(i));

  // Per star and frame: the quantities the curves use.
  const cx = g.cx, cy = g.cy;
  // Second moments: unweighted inside the aperture from the pixels (profile.ts; exact for the
  // parabola) when every frame has them, else the pipeline's adaptive moments (near enough).
  const exactMoments = frames.every((f) => f.profiles && f.profiles.length === f.stars.length);
  const per = (f: number, j: number) => {
    const s = frames[f].stars[j];
    const prof = frames[f].profiles?.[j] ?? null;
    const m = exactMoments ? (prof ? { ixx: prof.ixx, iyy: prof.iyy, ixy: prof.ixy } : null) : s.moments;
    if (!m) return { hfd: s.hfdPx, fwhm: s.fwhmPx, T: NaN, irad: NaN, itan: NaN, radii: null };
    const T = m.ixx + m.iyy;
    const phi = Math.atan2(s.y - cy, s.x - cx);
    const D = (m.ixx - m.iyy) * Math.cos(2 * phi) + 2 * m.ixy * Math.sin(2 * phi);
    return { hfd: s.hfdPx, fwhm: s.fwhmPx, T, irad: (T + D) / 2, itan: (T - D) / 2, radii: prof ? prof.radiiPx : null };
  };
  const zoneStats = (key: 'hfd' | 'fwhm' | 'T' | 'irad' | 'itan') => members.map((ms) => P.map((_, f) => medErr(ms.map((i) => tracks[i][f] >= 0 ? per(f, tracks[i][f])[key] : NaN))));
  const hfdZ = zoneStats('hfd'), fwhmZ = zoneStats('fwhm'), tZ = zoneStats('T'), iradZ = zoneStats('irad'), itanZ = zoneStats('itan');
  const squared = (st: { m: number; e: number }[][]) => ({ y: st.map((r) => r.map((v) => v.m * v.m)), sig: st.map((r) => r.map((v) => 2 * v.m * v.e)) });
  const plain = (st: { m: number; e: number }[][]) => ({ y: st.map((r) => r.map((v) => v.m)), sig: st.map((r) => r.map((v) => v.e)) });
  const tFit = fitCurves({ positions: P, ...plain(tZ) });
  const hfdFit = fitCurves({ positions: P, ...squared(hfdZ) });
  const fwhmFit = fitCurves({ positions: P, ...squared(fwhmZ) });
  const iradFit = fitCurves({ positions: P, ...plain(iradZ) });
  const itanFit = fitCurves({ positions: P, ...plain(itanZ) });

  // Does the series cross focus? The pooled curve of all stars.
  const pooled = P.map((_, f) => medErr(tracks.map((t) => t[f] >= 0 ? frames[f].stars[t[f]].hfdPx : NaN)));
  const pooledFit = fitCurves({ positions: P, y: [pooled.map((v) => v.m * v.m)], sig: [pooled.map((v) => 2 * v.m * v.e)], frameTerms: false });
  const pooledV = pooledFit?.zones[0] ? vertexOf(pooledFit.zones[0]) : null;
  const pMin = P[0], pMax = P[nf - 1];
  if (!pooledV || !pooledV.hasMinimum || !(pooledV.focus > pMin && pooledV.focus < pMax)) {
    const firstM = pooled[0].m, lastM = pooled[nf - 1].m;
    const larger = Number.isFinite(firstM) && Number.isFinite(lastM) ? lastM < firstM : (pooledV?.focus ?? 0) > pMax;
    throw usage(`through-focus: the series never crosses focus: the stars ${larger ? 'shrink toward the largest position' : 'shrink toward the smallest position'} (HFD ${fmt(firstM, 2)} px at ${fmt(pMin, 1)} um, ${fmt(lastM, 2)} px at ${fmt(pMax, 1)} um). Extend the series toward ${larger ? `larger positions (the sensor farther from the lens), beyond ${fmt(pMax, 1)} um` : `smaller positions (the sensor nearer the lens), below ${fmt(pMin, 1)} um`}`);
  }
  const smallest = pooled.reduce((k, v, f) => (v.m < pooled[k].m ? f : k), 0);
  if (smallest === 0 || smallest === nf - 1) notes.push(`the smallest stars are in the ${smallest === 0 ? 'first' : 'last'} frame: a frame beyond ${fmt(P[smallest], 1)} um would pin best focus down better`);

  // Zones.
  const span = pMax - pMin;
  const zones: ThroughFocusZone[] = [];
  const vtx = (fit: CurveFit | null, z: number) => (fit?.zones[z] ? vertexOf(fit.zones[z] as ZoneCurve) : null);
  for (let z = 0; z < nz; z++) {
    const col = z % cols, row = Math.floor(z / cols);
    const ms = members[z];
    const zx = ms.length ? ms.reduce((a, i) => a + pos[i].x, 0) / ms.length : (col + 0.5) * (W / cols) - 0.5;
    const zy = ms.length ? ms.reduce((a, i) => a + pos[i].y, 0) / ms.length : (row + 0.5) * (H / rows) - 0.5;
    const vm = vtx(tFit, z), vh = vtx(hfdFit, z), vf = vtx(fwhmFit, z), vr = vtx(iradFit, z), vt = vtx(itanFit, z);
    const ms_ = summary(tFit?.zones[z] ?? null, vm);
    const hs = summary(hfdFit?.zones[z] ?? null, vh);
    const inside = ms_.bestFocusUm !== null && ms_.bestFocusUm >= pMin - 0.02 * span && ms_.bestFocusUm <= pMax + 0.02 * span;
    const fieldHeight = Math.hypot(zx - cx, zy - cy) / g.scale;
    const third = (v: number, n: number) => (n === 1 ? 0 : v < (n - 1) / 2 ? -1 : v > (n - 1) / 2 ? 1 : 0);
    zones.push({
      col, row, name: sideName(g, third(col, cols), third(row, rows)),
      centrePx: { x: zx, y: zy }, fieldHeight, stars: ms.length,
      bestFocusUm: ms_.bestFocusUm, errUm: ms_.errUm, insideSeries: inside,
      rms: ms_, hfd: hs, fwhm: summary(fwhmFit?.zones[z] ?? null, vf),
      // Width along the radius (I_rad) is smallest at the tangential focus; across it (I_tan) at the sagittal focus.
      tangentialFocusUm: vr?.hasMinimum ? nn(vr.focus) : null, tangentialErrUm: vr?.hasMinimum ? nn(vr.focusErr) : null,
      sagittalFocusUm: vt?.hasMinimum ? nn(vt.focus) : null, sagittalErrUm: vt?.hasMinimum ? nn(vt.focusErr) : null,
      rmsPx: tZ[z].map((v) => nn(Math.sqrt(v.m))), rmsErrPx: tZ[z].map((v) => nn(v.e / (2 * Math.sqrt(v.m)))),
      hfdPx: hfdZ[z].map((v) => nn(v.m)), hfdErrPx: hfdZ[z].map((v) => nn(v.e)),
      fwhmPx: fwhmZ[z].map((v) => nn(v.m)), fwhmErrPx: fwhmZ[z].map((v) => nn(v.e)),
    });
  }
  const outside = zones.filter((z) => z.bestFocusUm !== null && !z.insideSeries);
  if (outside.length) notes.push(`${outside.length} zone${outside.length > 1 ? 's have their' : ' has its'} best focus outside the series (${outside.map((z) => z.name).join(', ')}); those zones are left out of the focus surface: extend the series to include them`);

  // Per-star curves: the rms radius with the zone's curvature of the curve and the frames' seeing
  // terms held (noise of a second moment about 2 T / SNR, optics.md §1.6; scaled by the scatter).
  const stars: ThroughFocusStar[] = tracks.map((t, i) => {
    const z = zoneOf[i];
    const zc = tFit?.zones[z] ?? null;
    const T = P.map((_, f) => (t[f] >= 0 ? per(f, t[f]).T : NaN));
    const err = P.map((_, f) => (t[f] >= 0 ? 2 * T[f] / Math.max(5, frames[f].stars[t[f]].snr || 5) : NaN));
    const v = zc && tFit ? starVertex(P, T, err, zc.coef[2], zc.p0, tFit.frameTerms) : null;
    return {
      x: pos[i].x, y: pos[i].y, zone: z, bestFocusUm: v ? nn(v.focus) : null, errUm: v ? nn(v.focusErr) : null,
      hfdPx: P.map((_, f) => (t[f] >= 0 ? nn(frames[f].stars[t[f]].hfdPx) : null)),
      fwhmPx: P.map((_, f) => (t[f] >= 0 ? nn(frames[f].stars[t[f]].fwhmPx) : null)),
    };
  });

  // The focus surface.
  const surf = fitSurface(zones.filter((z) => z.insideSeries && z.errUm !== null).map((z) => ({ x: z.centrePx.x, y: z.centrePx.y, focus: z.bestFocusUm as number, err: z.errUm as number })), W, H);
  const optics = frames[0].optics;
  const pixelUm = optics.pixelSizeUm;
  let tilt: ThroughFocusResult['tilt'] = null;
  let curvature: ThroughFocusResult['curvature'] = null;
  let surface: ThroughFocusResult['surface'] = null;
  let centreFocus: { mean: number; std: number } | null = null;
  let best: { mean: number; std: number } | null = null;
  let bestField: { mean: number; std: number } | null = null;
  let spread: number | null = null;
  if (surf) {
    const draws = drawParameters(surf);
    const e = (i: number) => Math.sqrt(Math.max(0, surf.cov[i * 4 + i]));
    surface = {
      centrePx: surf.centrePx, scalePx: surf.scalePx,
      coef: { centreUm: surf.coef[0], xUm: surf.coef[1], yUm: surf.coef[2], curvatureUm: surf.coef[3] },
      errors: { centreUm: e(0), xUm: e(1), yUm: e(2), curvatureUm: surf.curvature ? e(3) : NaN },
      zonesUsed: surf.zones, errorScale: surf.errorScale,
    };
    const S = surf.scalePx;
    const ax = surf.coef[1] * (W / S), ay = surf.coef[2] * (H / S);
    // chi^2 of the tilt vector against its covariance (2 degrees of freedom).
    const vxx = surf.cov[5], vyy = surf.cov[10], vxy = surf.cov[6];
    const det = vxx * vyy - vxy * vxy;
    const chi2 = det > 0 ? (surf.coef[1] ** 2 * vyy - 2 * surf.coef[1] * surf.coef[2] * vxy + surf.coef[2] ** 2 * vxx) / det : 0;
    const axis = axisDeg((Math.atan2(surf.coef[2], surf.coef[1]) * 180) / Math.PI);
    const axes = draws.map((d) => axisDeg((Math.atan2(d[2], d[1]) * 180) / Math.PI - axis + 90) - 90);
    const gradUmPerPx = Math.hypot(surf.coef[1], surf.coef[2]) / S;
    const gradErr = meanStd(draws.map((d) => Math.hypot(d[1], d[2]) / S)).std;
    const adj = opts.adjusters?.length ? opts.adjusters : [[-0.5, -0.5], [W - 0.5, -0.5], [-0.5, H - 0.5], [W - 0.5, H - 0.5]].map(([x, y]) => ({ name: sideName(g, Math.sign(x - cx), Math.sign(y - cy)), xPx: x, yPx: y }));
    const planeAt = (c: readonly number[], x: number, y: number) => surfaceAt(surf, [0, c[1], c[2], 0], x, y);
    tilt = {
      acrossFrameUm: { x: ax, y: ay },
      acrossFrameErrUm: { x: e(1) * (W / S), y: e(2) * (H / S) },
      axisDeg: axis,
      axisErrDeg: meanStd(axes).std,
      signResolved: true,
      significant: chi2 >= 13.8,
      significance: Math.sqrt(chi2),
      tiltMrad: pixelUm ? gradUmPerPx / (pixelUm / 1000) : null,
      tiltErrMrad: pixelUm ? gradErr / (pixelUm / 1000) : null,
      moves: adj.map((a) => {
        const m = planeAt(surf.coef, a.xPx, a.yPx);
        return {
          name: a.name, xPx: a.xPx, yPx: a.yPx, moveUm: m, moveErrUm: meanStd(draws.map((d) => planeAt(d, a.xPx, a.yPx))).std,
          turns: opts.screwPitchMm ? m / (opts.screwPitchMm * 1000) : null,
        };
      }),
    };
    if (surf.curvature) {
      const c = surf.coef[3], ce = e(3);
      // delta = h^2 / (2R) (optics.md §3): R = h_corner^2 / (2 |c|), positive when the corners focus nearer the lens.
      const hMm = pixelUm ? (S * pixelUm) / 1000 : null;
      curvature = { cornerUm: c, cornerErrUm: ce, significant: Math.abs(c) >= 3 * ce, radiusMm: hMm && c !== 0 ? -(hMm * hMm) / (2 * (c / 1000)) : null };
    }
    centreFocus = meanStd(draws.map((d) => d[0]));
    centreFocus.mean = surf.coef[0];
    // Mean of u^2 + v^2 over the frame is 1/3 (W^2/12 + H^2/12 over S^2 = (W^2 + H^2)/4).
    best = meanStd(draws.map((d) => d[0] + d[3] / 3));
    best.mean = surf.coef[0] + surf.coef[3] / 3;
    const rg = surfaceRange(surf, surf.coef, W, H);
    bestField = meanStd(draws.map((d) => { const r = surfaceRange(surf, d, W, H); return 0.5 * (r.lo + r.hi); }));
    bestField.mean = 0.5 * (rg.lo + rg.hi);
    spread = rg.hi - rg.lo;
  }

  // Astigmatism: sagittal minus tangential focus per zone, fitted as a rho^2 (through the origin).
  let astigmatism: ThroughFocusResult['astigmatism'] = null;
  {
    let sw = 0, swy = 0, n = 0;
    const pts: { r2: number; s: number; e: number }[] = [];
    for (const z of zones) {
      if (z.sagittalFocusUm === null || z.tangentialFocusUm === null || z.sagittalErrUm === null || z.tangentialErrUm === null) continue;
      const r2 = z.fieldHeight ** 2;
      const s = z.sagittalFocusUm - z.tangentialFocusUm;
      const e = Math.hypot(z.sagittalErrUm, z.tangentialErrUm);
      if (!(e > 0)) continue;
      pts.push({ r2, s, e });
    }
    for (const p of pts) { const w = 1 / (p.e * p.e); sw += w * p.r2 * p.r2; swy += w * p.r2 * p.s; n++; }
    if (n >= 3 && sw > 0) {
      const a = swy / sw;
      const chi2 = pts.reduce((acc, p) => acc + ((p.s - a * p.r2) / p.e) ** 2, 0);
      const err = Math.sqrt(Math.max(1, chi2 / (n - 1)) / sw);
      astigmatism = { separationUm: a, separationErrUm: err, significant: Math.abs(a) >= 3 * err, zonesUsed: n };
    }
  }

  // Spherical aberration from the light radii near the centre. Stars are grouped by their own best
  // focus (from the focus surface, else their zone's), not by place: a group whose stars' foci
  // spread unevenly (curvature across a zone) would give the pooled curves a skew that looks like
  // spherical aberration.
  const haveProfiles = frames.every((f) => f.profiles && f.profiles.length === f.stars.length);
  let sph: SphericalFit | null = null;
  let sphGroups = 0;
  if (haveProfiles) {
    const focusOf = (i: number) => (surf ? surfaceAt(surf, surf.coef, pos[i].x, pos[i].y) : zones[zoneOf[i]].bestFocusUm);
    const innerStars = pos.map((_, i) => ({ i, f: focusOf(i) }))
      .filter(({ i, f }) => f !== null && Number.isFinite(f) && Math.hypot(pos[i].x - cx, pos[i].y - cy) <= 0.5 * g.scale) as { i: number; f: number }[];
    const groups: { stars: number[]; focus: number }[] = [];
    if (innerStars.length >= 8) {
      innerStars.sort((a, b) => a.f - b.f);
      const lo = innerStars[0].f, hi = innerStars[innerStars.length - 1].f;
      const width = Math.max(1, (hi - lo) / 6);
      for (let b = 0; lo + b * width <= hi; b++) {
        const members_ = innerStars.filter(({ f }) => f >= lo + b * width && (f < lo + (b + 1) * width || (f === hi && lo + (b + 1) * width > hi)));
        if (members_.length >= 8) groups.push({ stars: members_.map(({ i }) => i), focus: members_.reduce((a, m) => a + m.f, 0) / members_.length });
      }
    }
    const data = groups.map((gr) => {
      const rs = P.map((_, f) => PROFILE_FRACTIONS.map((_, r) => medErr(gr.stars.map((k) => {
        const t = tracks[k][f];
        return t >= 0 ? (per(f, t).radii?.[r] ?? NaN) : NaN;
      }))));
      return { radii: rs.map((row) => row.map((v) => v.m)), errs: rs.map((row) => row.map((v) => v.e)), focusGuess: gr.focus };
    }).filter((d) => d.radii.filter((r) => r.every(Number.isFinite)).length >= 3);
    const slope = zones.map((z) => z.hfd.slopePxPerUm).filter((v): v is number => v !== null);
    // HFD far from focus = 2 r50 = sqrt(2) kappa |delta| (ring-model.ts): kappa ~ slope / sqrt(2).
    const kappaGuess = slope.length ? median(slope) / Math.SQRT2 : 0.05;
    if (data.length) {
      sph = fitSpherical({ positions: P, fractions: PROFILE_FRACTIONS, groups: data, obstruction: eps, kappaGuess });
      sphGroups = data.length;
    }
  }
  const fKnown = optics.fNumber;
  const fSource = optics.source?.fNumber ?? null;
  let fNumber: number | null = fKnown;
  let fNumberSource: string | null = fKnown ? fSource : null;
  let travelScale: ThroughFocusResult['travelScale'] = null;
  if (sph && pixelUm) {
    // kappa = 1 / (2 N p) when the positions are the sensor's focal shifts.
    const measuredN = 1 / (2 * sph.kappa * pixelUm);
    if (fKnown) {
      const expected = 1 / (2 * fKnown * pixelUm);
      travelScale = { value: sph.kappa / expected, err: sph.kappaErr / expected };
      if (Math.abs(travelScale.value - 1) > Math.max(0.1, 3 * travelScale.err)) {
        notes.push(`the stars grow ${fmt(travelScale.value, 2)} times as fast with the focuser as f/${fmt(fKnown, 1)} predicts: the positions are not the sensor's focal shifts (a focuser that moves a lens group, a reducer, or a wrong step unit); micrometres here are focuser micrometres`);
      }
    } else if (Number.isFinite(measuredN)) {
      fNumber = measuredN;
      fNumberSource = 'measured';
      notes.push(`the f-number is not given; the blur growth through focus says f/${fmt(measuredN, 2)} (give --f-number to use the lens's own)`);
    }
  }
  const spherical = sphericalSummary(sph, fNumber, sphGroups, haveProfiles);
  const cfz = fNumber ? { halfWidthUm: 2.44 * (wavelengthNm / 1000) * fNumber * fNumber, wavelengthNm, fNumber, fNumberSource: fNumberSource ?? 'unknown' } : null;
  if (!cfz) notes.push('the f-number is unknown and could not be measured (no pixel size): the critical focus zone is not given (give --f-number and --pixel-size)');

  const result: ThroughFocusResult = {
    schema: 'skyloupe.throughfocus/1',
    positionsUm: P,
    stepUnitUm: opts.stepUnitUm ?? null,
    positionsGiven: opts.positionsGiven ? order.map((i) => opts.positionsGiven![i]) : null,
    frames: frames.map((f, k) => ({
      label: f.label ?? null, positionUm: f.positionUm, stars: f.stars.filter((s: Star) => s.flags.length === 0).length,
      tracked: tracks.filter((t) => t[k] >= 0).length, shiftPx: { x: match.shifts[k].dxPx, y: match.shifts[k].dyPx },
    })),
    referenceFrame: match.reference,
    frame: { width: W, height: H, displayTopRow: g.displayTopRow },
    optics: { fNumber, fNumberSource, pixelSizeUm: pixelUm, obstruction: eps },
    grid: { cols, rows },
    zones,
    stars,
    surface,
    tilt,
    curvature,
    astigmatism,
    spherical,
    centreFocusUm: centreFocus ? centreFocus.mean : null,
    centreFocusErrUm: centreFocus ? centreFocus.std : null,
    bestFocusUm: best ? best.mean : nn(pooledV.focus),
    bestFocusErrUm: best ? best.std : nn(pooledV.focusErr),
    bestFieldFocusUm: bestField ? bestField.mean : null,
    bestFieldFocusErrUm: bestField ? bestField.std : null,
    fieldFocusSpreadUm: spread,
    criticalFocusZone: cfz,
    travelScale,
    stamps: stampSeries(frames, tracks, zones, zoneOf, P),
    notes,
    findings: [],
  };
  result.findings = throughFocusFindings(result, g);
  return result;
}

function sphericalSummary(f: SphericalFit | null, N: number | null, groupsUsed: number, haveProfiles: boolean): ThroughFocusResult['spherical'] {
  if (!f || !Number.isFinite(f.longitudinal) || !Number.isFinite(f.longitudinalErr)) {
    return {
      kind: 'none', longitudinalUm: null, errUm: null, significant: false, transverseUm: null, blurDiameterUm: null, blurDiameterPx: null, groupsUsed,
      note: haveProfiles ? 'the light profiles near the centre could not be fitted' : 'spherical aberration needs the frames\' pixels (the star profiles), which these inputs lack',
    };
  }
  const L = f.longitudinal, e = f.longitudinalErr;
  const significant = Math.abs(L) >= 3 * e;
  return {
    kind: significant ? (L < 0 ? 'under-corrected' : 'over-corrected') : 'none',
    longitudinalUm: L,
    errUm: e,
    significant,
    // LSA = 2N TSA; the least-confusion circle (3/4 LSA from the paraxial focus) has diameter TSA / 2.
    transverseUm: N ? L / (2 * N) : null,
    blurDiameterUm: N ? Math.abs(L) / (4 * N) : null,
    blurDiameterPx: (Math.abs(L) * f.kappa) / 2,
    groupsUsed,
    note: significant ? null : `not significant: ${fmt(L, 1)} +- ${fmt(e, 1)} um`,
  };
}

/** Stamps of one star across the series in the centre zone and in the zone whose focus lies farthest from the centre's. */
function stampSeries(frames: readonly FocusFrameInput[], tracks: Int32Array[], zones: ThroughFocusZone[], zoneOf: number[], P: number[]): StampSeries[] {
  if (!frames.some((f) => f.stamps?.length)) return [];
  const byIndex = frames.map((f) => new Map((f.stamps ?? []).map((s) => [s.index, s])));
  const centre = zones.reduce((b, z, i) => (z.fieldHeight < zones[b].fieldHeight ? i : b), 0);
  const cf = zones[centre].bestFocusUm;
  let far = -1;
  zones.forEach((z, i) => {
    if (i === centre || z.bestFocusUm === null || cf === null) return;
    if (far < 0 || Math.abs(z.bestFocusUm - cf) > Math.abs((zones[far].bestFocusUm as number) - cf)) far = i;
  });
  const out: StampSeries[] = [];
  for (const z of far >= 0 ? [centre, far] : [centre]) {
    let bestT = -1, bestN = 0;
    tracks.forEach((t, i) => {
      if (zoneOf[i] !== z) return;
      const n = t.reduce((a, j, f) => a + (j >= 0 && byIndex[f].has(j) ? 1 : 0), 0);
      if (n > bestN) { bestN = n; bestT = i; }
    });
    if (bestT < 0 || bestN < 2) continue;
    const t = tracks[bestT];
    const first = t.findIndex((j) => j >= 0);
    const s0 = frames[first].stars[t[first]];
    out.push({
      zone: z, zoneName: zones[z].name, star: { x: s0.x, y: s0.y },
      frames: P.map((p, f) => {
        const st = t[f] >= 0 ? byIndex[f].get(t[f]) : undefined;
        if (!st) return null;
        return { positionUm: p, x0: st.x0, y0: st.y0, w: st.w, h: st.h, scale: st.scale, values: Array.from(st.values, (v) => (Number.isFinite(v) ? Math.round(v * 100) / 100 : null)) };
      }),
    });
  }
  return out;
}

function throughFocusFindings(r: ThroughFocusResult, g: Geometry): Finding[] {
  const out: Finding[] = [];
  const cfz = r.criticalFocusZone;
  const h = cfz?.halfWidthUm ?? null;
  const cfzWords = cfz ? ` (critical focus zone ±${fmt(cfz.halfWidthUm, 1)} µm at f/${fmt(cfz.fNumber, 1)} and ${fmt(cfz.wavelengthNm, 0)} nm)` : '';
  if (r.bestFocusUm !== null) {
    const parts = [`Best focus on average over the frame: ${fmt(r.bestFocusUm, 1)} ± ${fmt(r.bestFocusErrUm, 1)} µm`];
    if (r.centreFocusUm !== null) parts.push(`the centre alone: ${fmt(r.centreFocusUm, 1)} ± ${fmt(r.centreFocusErrUm, 1)} µm`);
    if (r.bestFieldFocusUm !== null && r.fieldFocusSpreadUm !== null) {
      parts.push(`the best compromise for the whole field: ${fmt(r.bestFieldFocusUm, 1)} ± ${fmt(r.bestFieldFocusErrUm, 1)} µm, where no point of the frame is more than ${fmt(r.fieldFocusSpreadUm / 2, 1)} µm from its own focus${cfzWords}`);
    }
    const tooDeep = h !== null && r.fieldFocusSpreadUm !== null && r.fieldFocusSpreadUm / 2 > h;
    out.push({
      code: 'THROUGH_FOCUS_BEST', severity: 'info',
      message: `${parts.join('; ')}.${tooDeep ? ' The field does not fit inside the critical focus zone at any one position.' : ''} Positions are in the focuser's micrometres, larger = sensor farther from the lens.`,
      numbers: { bestFocusUm: r.bestFocusUm, centreFocusUm: r.centreFocusUm, bestFieldFocusUm: r.bestFieldFocusUm, fieldFocusSpreadUm: r.fieldFocusSpreadUm, cfzHalfWidthUm: h },
    });
  }
  const t = r.tilt;
  if (t) {
    const total = Math.hypot(t.acrossFrameUm.x, t.acrossFrameUm.y);
    if (t.significant) {
      const moves = t.moves.map((m) => `${m.name} ${m.moveUm >= 0 ? 'away from' : 'toward'} the lens by ${fmt(Math.abs(m.moveUm), 1)} ± ${fmtErr(m.moveErrUm)} µm${m.turns !== null ? ` (${fmt(Math.abs(m.turns), 2)} turn)` : ''}`).join('; ');
      const worst = Math.max(...t.moves.map((m) => Math.abs(m.moveUm)));
      const sides = tiltSides(g, t.acrossFrameUm);
      out.push({
        code: 'THROUGH_FOCUS_TILT', severity: h !== null && worst > h ? 'major' : h !== null ? 'minor' : 'major',
        message: `The sensor is tilted against the focal surface: ${tiltAdvice(g, t)}. Best focus changes by ${acrossWords(g, t.acrossFrameUm, t.acrossFrameErrUm)} (${fmt(t.significance, 1)} sigma)${t.tiltMrad !== null ? `, ${fmt(t.tiltMrad, 2)} µm per mm` : ''}. Keeping the centre, move ${moves}.${h !== null && worst <= h ? ' The largest move is within the critical focus zone.' : ''} A mirror or flip in the image path swaps sides: check which physical side of the camera that is.`,
        numbers: { acrossWidthUm: t.acrossFrameUm.x, acrossHeightUm: t.acrossFrameUm.y, axisDeg: t.axisDeg, tiltMrad: t.tiltMrad, significance: t.significance, towardLens: sides.toward, awayFromLens: sides.away },
      });
    } else {
      out.push({
        code: 'THROUGH_FOCUS_LEVEL', severity: 'info',
        message: `No significant tilt: best focus changes by ${acrossWords(g, t.acrossFrameUm, t.acrossFrameErrUm)}.`,
        numbers: { acrossWidthUm: t.acrossFrameUm.x, acrossHeightUm: t.acrossFrameUm.y, magnitudeUm: total },
      });
    }
  }
  const c = r.curvature;
  if (c && c.significant) {
    const toward = c.cornerUm < 0;
    out.push({
      code: 'THROUGH_FOCUS_CURVATURE', severity: h !== null && Math.abs(c.cornerUm) > h ? 'minor' : 'info',
      message: `Field curvature: the corners focus ${fmt(Math.abs(c.cornerUm), 1)} ± ${fmt(c.cornerErrUm, 1)} µm ${toward ? 'nearer the lens' : 'farther from the lens'} than the centre${c.radiusMm !== null ? ` (a focal surface of radius about ${fmt(Math.abs(c.radiusMm), 0)} mm)` : ''}. A field flattener at its right spacing, or focusing a little ${toward ? 'inward' : 'outward'} of the centre's best focus, shares the blur between centre and corners.`,
      numbers: { cornerUm: c.cornerUm, cornerErrUm: c.cornerErrUm, radiusMm: c.radiusMm },
    });
  }
  const a = r.astigmatism;
  if (a && a.significant) {
    out.push({
      code: 'THROUGH_FOCUS_ASTIGMATISM', severity: h !== null && Math.abs(a.separationUm) > h ? 'minor' : 'info',
      message: `Astigmatism: at the corners the sagittal focus lies ${fmt(Math.abs(a.separationUm), 1)} ± ${fmt(a.separationErrUm, 1)} µm ${a.separationUm > 0 ? 'farther from' : 'nearer'} the lens than the tangential focus; between them stars turn from ${a.separationUm > 0 ? 'tangential to radial' : 'radial to tangential'} streaks as the sensor moves out. With a corrector, its spacing is the usual cause.`,
      numbers: { separationUm: a.separationUm, separationErrUm: a.separationErrUm },
    });
  }
  const s = r.spherical;
  if (s.longitudinalUm !== null) {
    if (s.significant) {
      const blur = s.blurDiameterUm !== null ? `its smallest blur is ${fmt(s.blurDiameterUm, 1)} µm across (${fmt(s.blurDiameterPx, 2)} px)` : `its smallest blur is ${fmt(s.blurDiameterPx, 2)} px across`;
      out.push({
        code: 'THROUGH_FOCUS_SPHERICAL', severity: s.blurDiameterPx !== null && s.blurDiameterPx > 1 ? 'minor' : 'info',
        message: `Spherical aberration, ${s.kind}: the marginal rays focus ${fmt(Math.abs(s.longitudinalUm), 1)} ± ${fmt(s.errUm, 1)} µm ${s.longitudinalUm < 0 ? 'nearer the lens' : 'farther from the lens'} than the central ones, so defocused stars show ${s.longitudinalUm < 0 ? 'a bright rim inside focus and a soft edge outside' : 'a soft edge inside focus and a bright rim outside'}; ${blur}. Stopping down shrinks it fastest of all aberrations, about as (N1/N2)^3: one stop to about 35 %, two stops to 12.5 %.`,
        numbers: { longitudinalUm: s.longitudinalUm, errUm: s.errUm, transverseUm: s.transverseUm, blurDiameterUm: s.blurDiameterUm, blurDiameterPx: s.blurDiameterPx },
      });
    } else {
      out.push({
        code: 'THROUGH_FOCUS_SPHERICAL_NONE', severity: 'info',
        message: `No significant spherical aberration: the light at the star's core and at its rim focus at the same position within ${fmt(3 * (s.errUm ?? NaN), 1)} µm (${fmt(s.longitudinalUm, 1)} ± ${fmt(s.errUm, 1)} µm).`,
        numbers: { longitudinalUm: s.longitudinalUm, errUm: s.errUm },
      });
    }
  }
  for (const n of r.notes) out.push({ code: 'THROUGH_FOCUS_NOTE', severity: 'info', message: `${n[0].toUpperCase()}${n.slice(1)}.` });
  return out;
}

/** CLI-facing: `through-focus --at UM=FRAME ...` on analyses (extras from frame-extras.ts when the pixels were at hand). */
export function runThroughFocus(items: readonly { positionUm: number; analysis: AnalysisLike; label?: string; identity?: FrameIdentity | null; profiles?: (StarProfile | null)[] | null; stamps?: StarStamp[] | null }[], opts: ThroughFocusOptions = {}): ThroughFocusResult {
  return throughFocus(items.map((it) => ({ ...fromAnalysis(it.analysis, it.label, it.identity), positionUm: it.positionUm, profiles: it.profiles ?? null, stamps: it.stamps ?? null })), opts);
}

export function formatThroughFocus(r: ThroughFocusResult): string {
  const lines = [`Through focus: ${r.positionsUm.length} frames from ${fmt(r.positionsUm[0], 1)} to ${fmt(r.positionsUm[r.positionsUm.length - 1], 1)} µm, ${r.stars.length} stars followed, ${r.grid.cols} x ${r.grid.rows} zones`];
  lines.push('  best focus per zone as displayed (um, from the rms-radius curves; positions larger = sensor farther from the lens):');
  const rowOrder = Array.from({ length: r.grid.rows }, (_, i) => (r.frame.displayTopRow === 'last' ? r.grid.rows - 1 - i : i));
  for (const row of rowOrder) {
    lines.push('   ' + r.zones.filter((z) => z.row === row).map((z) => (z.bestFocusUm === null ? '     -      ' : `${fmt(z.bestFocusUm, 1).padStart(6)}±${fmt(z.errUm, 1).padEnd(4)}`)).join(' '));
  }
  if (r.tilt) lines.push(`  tilt: ${fmt(r.tilt.acrossFrameUm.x, 1)} ± ${fmt(r.tilt.acrossFrameErrUm.x, 1)} µm across the width, ${fmt(r.tilt.acrossFrameUm.y, 1)} ± ${fmt(r.tilt.acrossFrameErrUm.y, 1)} µm across the height${r.tilt.significant ? '' : ' (not significant)'}`);
  if (r.curvature) lines.push(`  curvature: corners ${fmt(r.curvature.cornerUm, 1)} ± ${fmt(r.curvature.cornerErrUm, 1)} µm from the centre${r.curvature.significant ? '' : ' (not significant)'}`);
  if (r.astigmatism) lines.push(`  astigmatism: sagittal minus tangential focus at the corners ${fmt(r.astigmatism.separationUm, 1)} ± ${fmt(r.astigmatism.separationErrUm, 1)} µm${r.astigmatism.significant ? '' : ' (not significant)'}`);
  const s = r.spherical;
  lines.push(`  spherical aberration: ${s.longitudinalUm === null ? s.note : `${s.kind}, ${fmt(s.longitudinalUm, 1)} ± ${fmt(s.errUm, 1)} µm${s.significant ? '' : ' (not significant)'}`}`);
  lines.push(`  best focus ${fmt(r.bestFocusUm, 1)} ± ${fmt(r.bestFocusErrUm, 1)} µm on average; whole-field compromise ${fmt(r.bestFieldFocusUm, 1)} ± ${fmt(r.bestFieldFocusErrUm, 1)} µm${r.criticalFocusZone ? `; critical focus zone ±${fmt(r.criticalFocusZone.halfWidthUm, 1)} µm (f/${fmt(r.criticalFocusZone.fNumber, 2)}, ${r.criticalFocusZone.wavelengthNm} nm)` : ''}`);
  for (const n of r.notes) lines.push(`  note: ${n}`);
  return lines.join('\n');
}

/** The fitted HFD curve of a zone at a position (px), for figures. */
export function zoneCurveAt(z: ThroughFocusZone, which: 'rms' | 'hfd' | 'fwhm', P: number): number | null {
  const c = z[which].coef;
  if (!c) return null;
  return curveAt({ coef: c, cov: [], p0: z[which].p0Um, frames: 0 }, P);
}
