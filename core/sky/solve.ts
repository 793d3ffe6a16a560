/**
 * The plate solver: from measured stars to the frame's place on the sky and the lens model, or
 * "not placed on the sky" with the reason. Steps: choose the field stars (flags respected,
 * brightest first); search the asterism index at the hinted scale, then (when allowed) at every
 * scale; accept a placement only through verify.ts's bound; then grow the match outward from the
 * asterism, refitting the lens model as it goes, and choose the projection and distortion terms.
 */
import { bundledCatalogue } from './bundled.ts';
import type { Catalogue } from './catalogue.ts';
import { bandIndex, bandRange, bandsForField } from './bands.ts';
import { searchPlacement, type FieldStars, type Placement } from './search.ts';
import { fieldCone, fitLens, matchProjected, projectCatalogue, type FitData, type FitFree, type FitResult, type Match } from './fit.ts';
import { PROJECTIONS, angleOfRadius, distortionFactor, maxFieldAngle, undistortRadius, type LensModel, type Projection } from './lens.ts';
import { ARCSEC, matTVec } from './sphere.ts';
import { starsInCone } from './catalogue.ts';
import { summarizeDistortion, type DistortionSummary } from './distortion.ts';

export interface SolveStar {
  x: number;
  y: number;
  flux: number;
  /** 1-sigma position error, px (per axis). */
  errPx?: number;
  fwhmPx?: number;
  flags?: readonly string[];
}

export interface SolveOptions {
  width: number;
  height: number;
  /** Expected sky scale (from the focal length and pixel size), arcsec per pixel; null = unknown. */
  scaleHintArcsecPerPx?: number | null;
  /** Relative tolerance of the hint. Default 0.1. */
  hintTolerance?: number;
  /** Search every scale when the hint fails or is missing. Default true. */
  blind?: boolean;
  catalogue?: Catalogue;
  /** Only this projection (default: chosen by the fit). */
  projection?: Projection;
  /** Fit the optical centre: true = whenever the stars support it (default), false = keep it at the frame centre. */
  fitCentre?: boolean;
  signal?: AbortSignal;
  /** Progress notes (development). */
  debug?: (note: string) => void;
}

/** Field stars that form asterisms: at a hinted scale, and in each pass of the search over scales (fewer: many passes). */
const QUAD_STARS = 30;
const QUAD_STARS_BLIND = 22;
/** Fields wider than this (diagonal, radians) also use asterisms of the stars near the centre, and the fisheye trial cameras. */
const WIDE_FIELD = (40 * Math.PI) / 180;
/** Largest asterisms used (radians): bigger ones suffer most from distortion. */
const WIDE_BAND_CAP = (30 * Math.PI) / 180;

function angleOfRadiusSafe(p: Projection, rho: number): number {
  const a = angleOfRadius(p, rho);
  return Number.isFinite(a) ? a : Math.PI;
}

/** Flags that make a detection useless for astrometry (not a star, or no position). */
const SKIP_FLAGS = new Set(['hot-pixel', 'cosmic-ray', 'streak', 'fit-failed']);

/** Natural log of the likelihood ratio that accepts a placement: T = 1e12. */
export const ACCEPT_LOG_ODDS = Math.log(1e12);
const REJECT_LOG_ODDS = -20;
/** Placements verified at most per frame (so the bound H / T stays below 3e-7). */
const MAX_PLACEMENTS_HINT = 60_000;
const MAX_PLACEMENTS_BLIND = 300_000;
/** With a hint that fails, other scales are searched within this factor of it. */
export const BLIND_NEAR_HINT = 2.5;
/** Sky scales a blind search considers, arcsec per pixel. */
export const BLIND_SCALE_ARCSEC = { lo: 0.2, hi: 2000 } as const;
/** Catalogue positions: rounding, and an allowance for the unknown proper motions over ~25 years (0.6"). */
const CATALOGUE_MOTION_ARCSEC = 0.6;

export interface ProjectionTrial {
  projection: Projection;
  matched: number;
  rmsPx: number;
  chi2PerDof: number;
  /** Largest |r_d / r - 1| over the frame, percent. */
  maxDistortionPercent: number;
}

export interface SearchSummary {
  /** 'hint' when the placement came from the hinted scale, 'blind' from the search over all scales. */
  mode: 'hint' | 'blind' | 'none';
  placementsTried: number;
  asterismsTried: number;
  /** ln of the likelihood ratio of the accepted placement (null when none). */
  logOdds: number | null;
  acceptLogOdds: number;
  /** Upper bound on the chance that a frame of unrelated dots gets placed: placements tried / T. */
  falsePositiveBound: number;
  hintFailed: boolean;
  seconds: number;
}

export interface SkySolution {
  solved: true;
  model: LensModel;
  fit: FitResult;
  /** Matched stars: index into the input stars and catalogue index, residual (model - measured), px. */
  matches: { star: number; cat: number; dxPx: number; dyPx: number }[];
  k2Fitted: boolean;
  centreFitted: boolean;
  projectionTrials: ProjectionTrial[];
  distortion: DistortionSummary;
  search: SearchSummary;
  starsUsed: number;
  catalogue: Catalogue;
  seconds: number;
}

export interface SkyNotPlaced {
  solved: false;
  reason: string;
  search: SearchSummary;
  starsUsed: number;
  catalogue: Catalogue;
  seconds: number;
}

export type SkyOutcome = SkySolution | SkyNotPlaced;

interface Prepared {
  fs: FieldStars;
  sigma: Float64Array;
  /** Input index of each prepared star. */
  from: Int32Array;
  /** 1 for stars without the low-snr flag. */
  precise: Uint8Array;
  sigma0: number;
}

function median(a: number[]): number {
  if (!a.length) return NaN;
  const s = [...a].sort((p, q) => p - q);
  return s.length % 2 ? s[(s.length - 1) / 2] : 0.5 * (s[s.length / 2 - 1] + s[s.length / 2]);
}

/** Usable stars, brightest first, without near duplicates; at most `limit`. */
function prepare(stars: readonly SolveStar[], limit: number, catErrPx: number): Prepared {
  const idx: number[] = [];
  stars.forEach((s, i) => {
    if (!Number.isFinite(s.x) || !Number.isFinite(s.y) || !(s.flux > 0)) return;
    if (s.flags && s.flags.some((f) => SKIP_FLAGS.has(f))) return;
    idx.push(i);
  });
  idx.sort((a, b) => stars[b].flux - stars[a].flux || a - b);
  const keep: number[] = [];
  const cell = 3;
  const seen = new Map<number, number[]>();
  for (const i of idx) {
    const s = stars[i];
    const gx = Math.floor(s.x / cell), gy = Math.floor(s.y / cell);
    let dup = false;
    for (let a = gx - 1; a <= gx + 1 && !dup; a++) for (let b = gy - 1; b <= gy + 1 && !dup; b++) {
      for (const j of seen.get(a * 1_000_003 + b) ?? []) if (Math.hypot(stars[j].x - s.x, stars[j].y - s.y) < 2) { dup = true; break; }
    }
    if (dup) continue;
    const k = gx * 1_000_003 + gy;
    const l = seen.get(k);
    if (l) l.push(i); else seen.set(k, [i]);
    keep.push(i);
    if (keep.length >= limit) break;
  }
  const n = keep.length;
  const x = new Float64Array(n), y = new Float64Array(n), sigma = new Float64Array(n);
  const fw = keep.slice(0, 50).map((i) => stars[i].fwhmPx ?? NaN).filter((v) => Number.isFinite(v) && v > 0);
  const mf = median(fw);
  const sigma0 = Number.isFinite(mf) ? Math.min(6, Math.max(1, 0.25 * mf)) : 1.5;
  keep.forEach((i, k) => {
    x[k] = stars[i].x; y[k] = stars[i].y;
    const e = stars[i].errPx;
    const se = Number.isFinite(e) && (e as number) > 0 ? (e as number) : 0.1;
    sigma[k] = Math.sqrt(se * se + 0.03 * 0.03 + catErrPx * catErrPx);
  });
  const precise = Uint8Array.from(keep, (i) => (stars[i].flags?.includes('low-snr') ? 0 : 1));
  return { fs: { x, y, n }, sigma, from: Int32Array.from(keep), sigma0, precise };
}

function emptySearch(): SearchSummary {
  return { mode: 'none', placementsTried: 0, asterismsTried: 0, logOdds: null, acceptLogOdds: ACCEPT_LOG_ODDS, falsePositiveBound: 0, hintFailed: false, seconds: 0 };
}

/** Place the frame on the sky. Never throws for bad data: an unplaceable frame gets a reason. */
export function solveSky(stars: readonly SolveStar[], opt: SolveOptions): SkyOutcome {
  const t0 = performance.now();
  const cat = opt.catalogue ?? bundledCatalogue();
  const W = opt.width, H = opt.height;
  const diag = Math.hypot(W, H);
  const hint = opt.scaleHintArcsecPerPx && opt.scaleHintArcsecPerPx > 0 && Number.isFinite(opt.scaleHintArcsecPerPx) ? opt.scaleHintArcsecPerPx : null;
  const catErrArcsec = Math.hypot(cat.info.positionErrorArcsec / Math.sqrt(12), CATALOGUE_MOTION_ARCSEC);
  // the catalogue term in pixels needs the scale: take the hint, refine after the placement
  const prep0 = prepare(stars, 600, hint ? catErrArcsec / hint : 0);
  const search = emptySearch();
  const done = (reason: string): SkyNotPlaced => ({ solved: false, reason, search: { ...search, seconds: (performance.now() - t0) / 1000 }, starsUsed: prep0.fs.n, catalogue: cat, seconds: (performance.now() - t0) / 1000 });
  if (prep0.fs.n < 6) {
    return done(`too few stars to place the frame: ${prep0.fs.n} usable (at least 6 are needed, 20 or more work best)`);
  }
  const { fs } = prep0;
  const cxF = (W - 1) / 2, cyF = (H - 1) / 2;
  const rNorm = diag / 2;
  const brightest = Array.from({ length: Math.min(fs.n, QUAD_STARS) }, (_, i) => i);
  const central: number[] = [];
  for (let i = 0; i < fs.n && central.length < QUAD_STARS; i++) if (Math.hypot(fs.x[i] - cxF, fs.y[i] - cyF) <= 0.5 * rNorm) central.push(i);
  const base = {
    width: W, height: H,
    verifyStars: 80,
    sigmaPx: prep0.sigma0,
    lensSlope: 0.03,
    acceptLogOdds: ACCEPT_LOG_ODDS,
    rejectLogOdds: REJECT_LOG_ODDS,
    maxRefs: 200,
    signal: opt.signal,
  };
  let placement: Placement | null = null;
  /** One pass: a trial camera, a range of focal lengths, the bands for those fields. */
  const pass = (projection: Projection, fPx: number, fLo: number, fHi: number, maxPlacements: number, nStars = QUAD_STARS): boolean => {
    // field diagonal at the range ends
    const phiAt = (f: number) => 2 * angleOfRadiusSafe(projection, rNorm / f);
    const phiLo = phiAt(fHi), phiHi = phiAt(fLo);
    const cap = WIDE_BAND_CAP;
    const ks = bandsForField(Math.min(phiLo, cap / (2.5 * 0.18)), Math.min(phiHi, cap / 0.6));
    if (!ks.length) return false;
    const tb = performance.now();
    const bands = ks.map((k) => bandIndex(cat, k));
    opt.debug?.(`pass ${projection} f ${fPx.toFixed(0)} [${fLo.toFixed(0)}, ${fHi.toFixed(0)}] bands ${ks.join(',')} built in ${(performance.now() - tb).toFixed(0)} ms`);
    const wide = phiHi > WIDE_FIELD;
    for (const all of wide && central.length >= 6 ? [brightest, central] : [brightest]) {
      const quadStars = all.slice(0, nStars);
      const left = maxPlacements - search.placementsTried;
      if (left <= 0 || opt.signal?.aborted) return false;
      const ts = performance.now();
      const r = searchPlacement(cat, fs, { ...base, camera: { fPx, projection }, fLo, fHi, bands, quadStars, maxPlacements: left });
      opt.debug?.(`  ${quadStars.length} stars: ${r.asterisms} asterisms, ${r.tried} placements, ${r.placement ? 'placed' : 'no'} in ${(performance.now() - ts).toFixed(0)} ms`);
      search.placementsTried += r.tried;
      search.asterismsTried += r.asterisms;
      if (r.placement) { placement = r.placement; return true; }
    }
    return false;
  };
  const projections: Projection[] = opt.projection ? [opt.projection] : [...PROJECTIONS];
  if (hint) {
    const tol = opt.hintTolerance ?? 0.1;
    const f = (206264.806 / hint);
    for (const pr of projections) {
      // fisheyes only where the hinted field is wide
      if (pr !== 'rectilinear' && 2 * angleOfRadiusSafe('rectilinear', rNorm / f) < WIDE_FIELD) continue;
      if (pass(pr, f, f / (1 + tol), f * (1 + tol), MAX_PLACEMENTS_HINT)) { search.mode = 'hint'; break; }
    }
    if (!placement) search.hintFailed = true;
  }
  // the search over other scales: every scale without a hint; with one, within a factor
  // BLIND_NEAR_HINT of it (a wrong focal length in the header, a focal reducer, a binned camera)
  const fAll = { lo: 206264.806 / BLIND_SCALE_ARCSEC.hi, hi: 206264.806 / BLIND_SCALE_ARCSEC.lo };
  const fRange = hint ? { lo: Math.max(fAll.lo, 206264.806 / hint / BLIND_NEAR_HINT), hi: Math.min(fAll.hi, (206264.806 / hint) * BLIND_NEAR_HINT) } : fAll;
  if (!placement && (opt.blind ?? true)) {
    const max = search.placementsTried + MAX_PLACEMENTS_BLIND;
    // the passes, ordered by how far their field is from 20 deg (camera lenses and small
    // telescopes first; the passes with the largest asterism bands are also the quickest):
    // wide fields: trial focal lengths 30 % apart, each projection (near a hint, the fisheyes only
    // where the hinted field is very wide: a rectilinear header on a fisheye is not plausible);
    // narrow fields (below 25 deg) in steps of a factor 2, where the codes barely depend on the
    // trial camera, so one per step does
    const fMin25 = rNorm / Math.tan((25 * Math.PI) / 180 / 2);
    const fisheyeNearHint = !hint || 2 * angleOfRadiusSafe('rectilinear', (rNorm * hint) / 206264.806) > (90 * Math.PI) / 180;
    const passes: { pr: Projection; f: number; lo: number; hi: number; phi: number }[] = [];
    for (let f = Math.min(fMin25, fRange.hi); f >= fRange.lo / 1.18; f /= 1.3) {
      for (const pr of projections) {
        if (pr !== 'rectilinear' && !fisheyeNearHint) continue;
        const phi = 2 * angleOfRadiusSafe(pr, rNorm / f);
        if (!(phi < maxFieldAngle(pr) * 2 * 0.98) || (pr !== 'rectilinear' && phi < WIDE_FIELD)) continue;
        passes.push({ pr, f, lo: f / 1.18, hi: f * 1.18, phi });
      }
      if (2 * angleOfRadiusSafe('fisheye-equidistant', rNorm / f) > 2 * Math.PI) break;
    }
    const proj0 = projections.includes('rectilinear') ? 'rectilinear' : projections[0];
    for (let fLo = Math.max(fRange.lo, fMin25 * 0.95); fLo < fRange.hi; fLo *= 2) {
      const fHi = Math.min(fRange.hi, fLo * 2.1), f = Math.sqrt(fLo * fHi);
      passes.push({ pr: proj0, f, lo: fLo, hi: fHi, phi: 2 * angleOfRadiusSafe(proj0, rNorm / f) });
    }
    const typical = (20 * Math.PI) / 180;
    passes.sort((p, q) => Math.abs(Math.log(p.phi / typical)) - Math.abs(Math.log(q.phi / typical)));
    for (const ps of passes) {
      if (placement) break;
      if (pass(ps.pr, ps.f, ps.lo, ps.hi, max, QUAD_STARS_BLIND)) search.mode = 'blind';
    }
  }
  search.falsePositiveBound = search.placementsTried * Math.exp(-ACCEPT_LOG_ODDS);
  search.seconds = (performance.now() - t0) / 1000;
  if (!placement) {
    const what = hint
      ? (opt.blind ?? true) ? `no asterism of the ${Math.min(prep0.fs.n, QUAD_STARS)} brightest stars matches the catalogue at the expected scale (${hint.toPrecision(3)}"/px) or within a factor ${BLIND_NEAR_HINT} of it`
        : `no asterism of the ${Math.min(prep0.fs.n, QUAD_STARS)} brightest stars matches the catalogue at the expected scale (${hint.toPrecision(3)}"/px)`
      : `no asterism of the ${Math.min(prep0.fs.n, QUAD_STARS)} brightest stars matches the catalogue at any scale`;
    return done(`${what}; ${search.placementsTried} candidate placements were checked and none passed the verification. Cloud, a frame that is not the night sky, too few catalogue stars in the field (${cat.info.name} reaches about magnitude 9) or heavy distortion can cause this`);
  }
  // refinement: the catalogue term in pixels at the placement's scale
  const placed = placement as Placement;
  search.logOdds = placed.logOdds;
  const scaleRad = 1 / placed.model.fPx;
  const prep = prepare(stars, 600, catErrArcsec * ARCSEC / scaleRad);
  const tr = performance.now();
  const refined = refine(cat, prep, placed, W, H, opt.projection, opt.fitCentre ?? true);
  opt.debug?.(`refined in ${(performance.now() - tr).toFixed(0)} ms`);
  if (!refined) {
    return done('an asterism matched and passed the verification, but the lens model fit did not hold across the frame (too few stars matched); the placement is not reported');
  }
  const { fit, matches, k2Fitted, centreFitted, trials } = refined;
  const distortion = summarizeDistortion({
    k1: fit.model.k1, k2: fit.model.k2, covK: fit.covK, k2Fitted,
    rNorm: fit.model.rNorm, width: W, height: H, cx: fit.model.cx, cy: fit.model.cy,
  });
  return {
    solved: true,
    model: fit.model,
    fit,
    matches: matches.map((m, k) => ({ star: prep.from[m.star], cat: m.cat, dxPx: fit.dx[k], dyPx: fit.dy[k] })),
    k2Fitted, centreFitted,
    projectionTrials: trials,
    distortion,
    search,
    starsUsed: prep.fs.n,
    catalogue: cat,
    seconds: (performance.now() - t0) / 1000,
  };
}

interface Refined {
  fit: FitResult;
  matches: Match[];
  k2Fitted: boolean;
  centreFitted: boolean;
  trials: ProjectionTrial[];
}

interface GrowResult { fit: FitResult; matches: Match[] }

/** What matching needs: the field stars, the catalogue stars that may fall in the frame, tolerances. */
interface MatchCtx {
  prep: Prepared;
  data: FitData;
  /** Field stars allowed in the final match (faint detections left out when there are enough others). */
  good: Uint8Array;
  limit: number;
  candidates: number[];
  s0: number;
  W: number;
  H: number;
  cat: Catalogue;
}

function matchContext(cat: Catalogue, prep: Prepared, model: LensModel, W: number, H: number): MatchCtx {
  const n = prep.fs.n;
  const limit = Math.max(60, 2 * n);
  // catalogue stars that may fall in the frame (brightest first), once: the frame's reach about
  // the axis under this projection, with room for the distortion
  const axis = matTVec(model.rot, [0, 0, 1]);
  const reach = Math.min(maxFieldAngle(model.projection), angleOfRadiusSafe(model.projection, (1.3 * model.rNorm) / model.fPx) + 0.02);
  return {
    prep, cat, W, H, limit, s0: prep.sigma0,
    data: { x: prep.fs.x, y: prep.fs.y, sigma: prep.sigma, xyz: cat.xyz },
    good: prep.precise.reduce((c, v) => c + v, 0) >= 30 ? prep.precise : new Uint8Array(n).fill(1),
    candidates: starsInCone(cat, axis, reach, 6 * limit),
  };
}

/** Robust sigma of 2-D residuals: median distance / sqrt(2 ln 2) (the median of a circular Gaussian's radius). */
function robustSigma(f: FitResult): number {
  const r = Array.from(f.dx, (v, k) => Math.hypot(v, f.dy[k]));
  return Math.max(0.05, median(r) / Math.sqrt(2 * Math.LN2));
}

/**
 * Rounds over the whole frame: match within 4 robust sigmas of the residuals, drop matches beyond
 * 3.5, refit the given terms.
 */
function polish(ctx: MatchCtx, model: LensModel, free: FitFree, sr: number, rounds = 3): GrowResult | null {
  const { prep, data } = ctx;
  const { x: fx, y: fy, n } = prep.fs;
  let fit: FitResult | null = null;
  let matches: Match[] = [];
  for (let round = 0; round < rounds; round++) {
    const proj = projectCatalogue(ctx.cat, model, ctx.W, ctx.H, ctx.limit, 2, ctx.candidates);
    const tol = Math.max(1.5 * ctx.s0, 4 * sr);
    matches = matchProjected(proj, fx, fy, n, () => tol, (i) => ctx.good[i] === 1);
    if (matches.length < 5) return null;
    const use = (m: number): FitFree => ({ k1: free.k1 && m >= 10, k2: free.k2 && m >= 16, centre: free.centre && m >= 30 });
    fit = fitLens(model, data, matches, use(matches.length));
    sr = robustSigma(fit);
    const keep: Match[] = [];
    matches.forEach((m, k) => { if (Math.hypot(fit!.dx[k], fit!.dy[k]) <= 3.5 * sr) keep.push(m); });
    if (keep.length < matches.length && keep.length >= 5) {
      matches = keep;
      fit = fitLens(fit.model, data, matches, use(matches.length));
      sr = robustSigma(fit);
    }
    model = fit.model;
  }
  return fit ? { fit, matches } : null;
}

/**
 * Grow the match outward from the asterism: match within a radius that widens by 1.6 each round,
 * refit, until the whole frame is covered and the match set is stable; then polish.
 */
function grow(cat: Catalogue, prep: Prepared, p: Placement, W: number, H: number, projection: Projection): GrowResult | null {
  const { x: fx, y: fy, n } = prep.fs;
  let model: LensModel = { ...p.model, projection };
  const ctx = matchContext(cat, prep, model, W, H);
  const far = Math.max(...[[0, 0], [W - 1, 0], [0, H - 1], [W - 1, H - 1]].map(([x, y]) => Math.hypot(x - p.xq, y - p.yq)));
  let rho = Math.max(2 * p.sizePx, 0.15 * Math.hypot(W, H));
  let fit: FitResult | null = null;
  let matches: Match[] = [];
  const s0 = prep.sigma0;
  let lastCount = -1;
  for (let round = 0; round < 16; round++) {
    const proj = projectCatalogue(cat, model, W, H, ctx.limit, 2, ctx.candidates);
    const base = fit ? Math.max(3 * s0, 4 * fit.rmsPx) : 3 * s0;
    const slope = fit ? 0.01 : Math.hypot(0.02, s0 / p.sizePx);
    const xq = p.xq, yq = p.yq, r = rho;
    matches = matchProjected(proj, fx, fy, n, (x, y) => base + slope * Math.hypot(x - xq, y - yq), (i) => Math.hypot(fx[i] - xq, fy[i] - yq) <= r);
    if (matches.length < 4) return null;
    const free: FitFree = { k1: matches.length >= 10 && rho >= 0.5 * model.rNorm, k2: false, centre: false };
    fit = fitLens(model, ctx.data, matches, free, 10);
    model = fit.model;
    if (rho >= far && matches.length === lastCount) break;
    lastCount = rho >= far ? matches.length : -1;
    rho = Math.min(far, rho * 1.6);
  }
  if (!fit) return null;
  return polish(ctx, model, { k1: true, k2: false, centre: false }, robustSigma(fit));
}

/** Largest |r_d / r - 1| over the frame, percent. */
function maxDistortionPercent(m: LensModel, W: number, H: number): number {
  let worst = 0;
  for (const [x, y] of [[0, 0], [W - 1, 0], [0, H - 1], [W - 1, H - 1], [(W - 1) / 2, 0], [0, (H - 1) / 2], [W - 1, (H - 1) / 2], [(W - 1) / 2, H - 1]]) {
    const rd = Math.hypot(x - m.cx, y - m.cy);
    for (const f of [0.25, 0.5, 0.75, 1]) {
      const r = undistortRadius(m, f * rd);
      if (Number.isFinite(r) && r > 0) worst = Math.max(worst, Math.abs(distortionFactor(m, r) - 1));
      else worst = Math.max(worst, 1);
    }
  }
  return 100 * worst;
}

/** Half-diagonal field angle beyond which the fisheye projections are tried too (narrower, they are alike). */
const FISHEYE_TRY_DEG = 25;

function refine(cat: Catalogue, prep: Prepared, p: Placement, W: number, H: number, only: Projection | undefined, fitCentre: boolean): Refined | null {
  const data: FitData = { x: prep.fs.x, y: prep.fs.y, sigma: prep.sigma, xyz: cat.xyz };
  const first = grow(cat, prep, p, W, H, only ?? 'rectilinear');
  const candidates: { projection: Projection; g: GrowResult }[] = [];
  if (first) candidates.push({ projection: only ?? 'rectilinear', g: first });
  let wide = !first;
  if (first) {
    const cone = fieldCone(first.fit.model, W, H);
    wide = !cone || cone.radius > (FISHEYE_TRY_DEG * Math.PI) / 180;
  }
  if (!only && wide) {
    for (const pr of PROJECTIONS) {
      if (pr === 'rectilinear') continue;
      const g = grow(cat, prep, p, W, H, pr);
      if (g) candidates.push({ projection: pr, g });
    }
  }
  if (!candidates.length) return null;
  // full model per candidate (k1, k2), then the choice: among fits that match nearly as many
  // stars and fit nearly as well as the best, the projection that needs the least distortion
  const full = candidates.map((c) => {
    const f = c.g.matches.length >= 16 ? fitLens(c.g.fit.model, data, c.g.matches, { k1: true, k2: true, centre: false }) : c.g.fit;
    return { ...c, f };
  });
  const trials: ProjectionTrial[] = full.map((c) => ({
    projection: c.projection,
    matched: c.g.matches.length,
    rmsPx: c.f.rmsPx,
    chi2PerDof: c.f.dof > 0 ? c.f.chi2 / c.f.dof : NaN,
    maxDistortionPercent: maxDistortionPercent(c.f.model, W, H),
  }));
  const maxMatched = Math.max(...trials.map((t) => t.matched));
  const bestChi = Math.min(...trials.filter((t) => t.matched >= 0.9 * maxMatched).map((t) => t.chi2PerDof));
  let pick = 0;
  let pickD = Infinity;
  trials.forEach((t, i) => {
    if (t.matched < 0.9 * maxMatched || !(t.chi2PerDof <= 1.5 * bestChi + 1e-9)) return;
    if (t.maxDistortionPercent < pickD - 1e-9) { pick = i; pickD = t.maxDistortionPercent; }
  });
  const chosen = full[pick];
  const ctx = matchContext(cat, prep, chosen.g.fit.model, W, H);
  // distortion terms: k1 when the stars allow it; k2 and a free optical centre only when they are
  // supported (chi^2 drop of 9, one parameter, and 11.8, two parameters: 3 sigma), judged in
  // units of the reduced chi^2 of the larger model; after each, match and clip again
  let cur: GrowResult = chosen.g;
  let k2Fitted = false, centreFitted = false;
  if (cur.matches.length >= 16) {
    const f2 = fitLens(cur.fit.model, data, cur.matches, { k1: true, k2: true, centre: false });
    const red = Math.max(1, f2.chi2 / Math.max(1, f2.dof));
    if ((cur.fit.chi2 - f2.chi2) / red > 9) {
      const p2 = polish(ctx, f2.model, { k1: true, k2: true, centre: false }, robustSigma(f2));
      if (p2) { cur = p2; k2Fitted = true; }
    }
  }
  if (fitCentre && cur.matches.length >= 30) {
    const fc = fitLens(cur.fit.model, data, cur.matches, { k1: true, k2: k2Fitted, centre: true });
    const red = Math.max(1, fc.chi2 / Math.max(1, fc.dof));
    const rNorm = cur.fit.model.rNorm;
    if ((cur.fit.chi2 - fc.chi2) / red > 11.8 && (fc.err.cx ?? Infinity) < 0.1 * rNorm && (fc.err.cy ?? Infinity) < 0.1 * rNorm
      && Math.hypot(fc.model.cx - (W - 1) / 2, fc.model.cy - (H - 1) / 2) < 0.5 * rNorm) {
      const pc = polish(ctx, fc.model, { k1: true, k2: k2Fitted, centre: true }, robustSigma(fc));
      if (pc && pc.fit.err.cx !== null) { cur = pc; centreFitted = true; }
    }
  }
  let fit = cur.fit;
  const matches = cur.matches;
  if (matches.length < 10) {
    // too few stars for the distortion: the similarity only
    fit = fitLens(fit.model, data, matches, { k1: false, k2: false, centre: false });
  }
  return { fit, matches, k2Fitted, centreFitted, trials };
}

export { bandRange };

