/**
 * Renders a Scene into a 16-bit-style frame (ADU) with the truth beside it.
 * Analytic stars: pixel-integrated elliptical Gaussian/Moffat, then Poisson noise.
 * Optics stars: photon (ray) sampling through psf-optics.ts, binned into pixels,
 * which gives exact Poisson shot noise and pixel integration.
 */
import { SkyloupeError } from '../errors.ts';
import { poisson, sensorRow, type SensorChain } from './noise.ts';
import { Rng, streamSeed } from './prng.ts';
import {
  autoOrder, makeProfile, recordedFwhm, renderAnalyticStar, type AnalyticStar,
} from './psf-analytic.ts';
import {
  geometricMoments, localOptics, opticsField, sampleOffsets, seeingVariance, SEEING_MOFFAT,
} from './psf-optics.ts';
import { isSkyStars, parseScene, SPACING_ASTIGMATISM, SPACING_CURVATURE, type AnalyticPsf, type OpticsPsf, type Scene } from './scene.ts';
import { skyStarsOfScene, skyTruth, type SkyStars } from './sky-scene.ts';
import { generateStars, type PlacedStar } from './stars.ts';

export interface SimTruthStar {
  /** Index in the scene's star list (explicit or generated order). */
  id: number;
  /** Catalogue stars (scene stars with `pointing`): catalogue number, magnitude and ICRS position. */
  catalogueId?: string;
  mag?: number;
  raDeg?: number;
  decDeg?: number;
  /** True intensity centroid of the star (expected, before pixelisation), storage px. */
  x: number;
  y: number;
  /** Gaussian image point at mid-exposure (the scene position), px. */
  xNominal: number;
  yNominal: number;
  /** Expected electrons of the whole profile on the sensor (after vignetting). */
  fluxE: number;
  fluxAdu: number;
  /** Relative illumination applied to this star (1 without vignetting). */
  vignetting: number;
  /** A pixel of this star reached the saturation level. */
  saturated: boolean;
  // Analytic stars.
  model?: 'gaussian' | 'moffat';
  fwhmMajorPx?: number;
  fwhmMinorPx?: number;
  /** Major-axis angle, degrees from +x toward +y, in (-90, 90]. */
  thetaDeg?: number;
  beta?: number;
  /** FWHM of the profile convolved with the 1-px box, along the major / minor axis. */
  recordedFwhmMajorPx?: number;
  recordedFwhmMinorPx?: number;
  /** Expected electrons actually deposited in the frame (stamp truncation and frame edges). */
  renderedFluxE?: number;
  // Optics stars.
  /** Photons drawn (Poisson around fluxE) and those that landed inside the frame. */
  photons?: number;
  photonsInFrame?: number;
  radiusMm?: number;
  positionAngleDeg?: number;
  /** Medial / sagittal / tangential focus errors, µm (positive = sensor behind focus). */
  defocusUm?: number;
  defocusSagittalUm?: number;
  defocusTangentialUm?: number;
  /** S-T focal separation, µm. */
  astigmatismUm?: number;
  /** Geometric blur extents along / across the radius and the medial disk diameter, px. */
  blurRadialPx?: number;
  blurTangentialPx?: number;
  defocusDiskPx?: number;
  comaSagittalPx?: number;
  comaTangentialPx?: number;
  comaTailAngleDeg?: number;
  trailLengthPx?: number;
  trailAngleDeg?: number;
  rotationArcPx?: number;
  /** Unweighted second moments of the geometric blur (defocus, astigmatism, coma, trail, rotation), px^2, no seeing, no pixel box. */
  geometricMomentsPx?: { xx: number; yy: number; xy: number };
  /** Per-axis seeing variance, px^2 (null: infinite, Moffat β <= 2). */
  seeingVariancePx?: number | null;
  /** Geometric + seeing moments, px^2 (null when the seeing variance is infinite); add 1/12 per axis for the pixel box. */
  momentsPx?: { xx: number; yy: number; xy: number } | null;
  /** Radial-minus-tangential moment of the defocus/astigmatism part alone, px^2 (optics.md §5: (1+ε²)(δ_t²-δ_s²)/(16N²p²)). */
  astigRadialMinusTangentialPx2?: number;
}

export interface SimResult {
  width: number;
  height: number;
  /** ADU, quantised (unless scene.quantize is false), row-major, y = row. */
  data: Float32Array;
  truth: { stars: SimTruthStar[]; scene: Scene; global: Record<string, unknown> };
  /** FITS header cards. */
  cards: { key: string; value: string | number | boolean; comment?: string }[];
}

/** Mean rays drawn per chunk in the photon renderer (buffers reused, nothing allocated per photon). */
const CHUNK = 8192;

function normTheta(deg: number): number {
  let t = ((((deg + 90) % 180) + 180) % 180) - 90; // [-90, 90)
  if (t <= -90) t += 180;
  return t;
}

function angleDeg(x: number, y: number): number {
  return (Math.atan2(y, x) * 180) / Math.PI;
}

/** Relative illumination 1 - (1 - C)(r/r_corner)^2 about a centre; r_corner reaches the farthest frame corner. */
function vignettingFn(scene: Scene, centre: { x: number; y: number }): (x: number, y: number) => number {
  const v = scene.vignetting;
  if (!v) return () => 1;
  const c = v.centerPx ?? centre;
  const W = scene.width - 1, H = scene.height - 1;
  const rc2 = Math.max(c.x * c.x, (W - c.x) ** 2) + Math.max(c.y * c.y, (H - c.y) ** 2);
  const k = rc2 > 0 ? (1 - v.cornerIllumination) / rc2 : 0;
  return (x, y) => Math.max(0, 1 - k * ((x - c.x) ** 2 + (y - c.y) ** 2));
}

function uniformIn(rng: Rng, r: [number, number]): number {
  return r[0] + rng.uniform() * (r[1] - r[0]);
}

export function renderScene(input: Scene): SimResult {
  const scene = parseScene(input);
  const t0 = performance.now();
  const W = scene.width, H = scene.height;
  const data = new Float32Array(W * H);
  const seed = scene.seed;
  const gain = scene.noise.gain;
  const frameCentre = { x: (W - 1) / 2, y: (H - 1) / 2 };

  const st = scene.stars;
  let sky: SkyStars | null = null;
  let placed: PlacedStar[];
  if (isSkyStars(st)) {
    sky = skyStarsOfScene(scene, st);
    placed = sky.stars;
  } else if (Array.isArray(st)) placed = st.map((s) => ({ x: s.x, y: s.y, fluxE: s.fluxE }));
  else placed = generateStars(st, W, H, new Rng(streamSeed(seed, 1)));

  const truth: SimTruthStar[] = [];
  const global: Record<string, unknown> = {
    renderer: scene.psf.kind,
    plateScaleArcsecPerPx: (206.265 * scene.optics.pixelSizeUm) / scene.optics.focalLengthMm, // optics.md §7
    frameCenterPx: frameCentre,
  };
  let starsAreCounts: boolean;
  let sizePx: (i: number) => number; // radius for the saturation check

  if (scene.psf.kind === 'analytic') {
    starsAreCounts = false;
    const opt = renderAnalytic(scene, scene.psf, placed, data, truth, vignettingFn(scene, frameCentre));
    sizePx = (i) => (truth[i].fwhmMajorPx ?? 2) + 1;
    Object.assign(global, opt);
  } else {
    starsAreCounts = true;
    const opt = renderOptics(scene, scene.psf, placed, data, truth);
    const seeingFwhm = scene.psf.seeing.fwhmPx;
    sizePx = (i) => {
      const m = truth[i].geometricMomentsPx!;
      return Math.min(100, 2 * Math.sqrt(Math.max(m.xx, m.yy)) + seeingFwhm + 2);
    };
    Object.assign(global, opt);
  }

  // Hot pixels and cosmic rays: electrons added before the sensor chain.
  const hotRng = new Rng(streamSeed(seed, 3));
  const hot: { x: number; y: number; adu: number }[] = [];
  for (let i = 0; i < scene.hotPixels.count; i++) {
    const x = Math.min(W - 1, Math.floor(hotRng.uniform() * W));
    const y = Math.min(H - 1, Math.floor(hotRng.uniform() * H));
    const adu = scene.hotPixels.minAdu + hotRng.uniform() * (scene.hotPixels.maxAdu - scene.hotPixels.minAdu);
    data[y * W + x] += adu * gain;
    hot.push({ x, y, adu });
  }
  const crRng = new Rng(streamSeed(seed, 4));
  const rays: { x0: number; y0: number; x1: number; y1: number; energyE: number }[] = [];
  for (let i = 0; i < scene.cosmicRays.count; i++) {
    const cr = scene.cosmicRays;
    const xa = crRng.uniform() * (W - 1), ya = crRng.uniform() * (H - 1);
    const len = crRng.uniform() * cr.maxLengthPx, ang = crRng.uniform() * 2 * Math.PI;
    const xb = xa + len * Math.cos(ang), yb = ya + len * Math.sin(ang);
    const e = cr.minE + crRng.uniform() * (cr.maxE - cr.minE);
    // Deposit along the track, four samples per pixel of length, nearest pixel each.
    const ns = Math.max(1, Math.ceil(4 * len));
    for (let k = 0; k < ns; k++) {
      const f = ns === 1 ? 0 : k / (ns - 1);
      const ix = Math.round(xa + f * (xb - xa)), iy = Math.round(ya + f * (yb - ya));
      if (ix >= 0 && ix < W && iy >= 0 && iy < H) data[iy * W + ix] += e / ns;
    }
    rays.push({ x0: xa, y0: ya, x1: xb, y1: yb, energyE: e });
  }

  // Sky (ADU above bias at the frame centre, gradients across the frame, quadratic to the corner), vignetted.
  const chain: SensorChain = {
    gain, readNoiseE: scene.noise.readNoiseE, biasAdu: scene.noise.biasAdu,
    shotNoise: scene.noise.shotNoise, quantize: scene.quantize, saturationAdu: scene.saturationAdu,
  };
  const vig = vignettingFn(scene, scene.psf.kind === 'optics' ? (global.opticalCenterPx as { x: number; y: number }) : frameCentre);
  const sk = scene.sky;
  const rc2 = frameCentre.x * frameCentre.x + frameCentre.y * frameCentre.y;
  const skyRow = new Float64Array(W);
  const noiseRng = new Rng(streamSeed(seed, 5));
  for (let y = 0; y < H; y++) {
    const dy = y - frameCentre.y;
    const base = sk.level + (sk.gradientY * dy) / H;
    for (let x = 0; x < W; x++) {
      const dx = x - frameCentre.x;
      let s = base + (sk.gradientX * dx) / W;
      if (sk.quadraticAdu !== 0 && rc2 > 0) s += (sk.quadraticAdu * (dx * dx + dy * dy)) / rc2;
      if (scene.vignetting) s *= vig(x, y);
      skyRow[x] = s > 0 ? s * gain : 0;
    }
    sensorRow(data, y * W, skyRow, W, starsAreCounts, chain, noiseRng);
  }

  // Saturation flags.
  const sat = scene.saturationAdu;
  for (let i = 0; i < truth.length; i++) {
    const t = truth[i];
    const r = Math.ceil(sizePx(i));
    const cx = Math.round(t.x), cy = Math.round(t.y);
    let s = false;
    for (let y = Math.max(0, cy - r); !s && y <= Math.min(H - 1, cy + r); y++) {
      for (let x = Math.max(0, cx - r); x <= Math.min(W - 1, cx + r); x++) {
        if (data[y * W + x] >= sat) { s = true; break; }
      }
    }
    t.saturated = s;
  }

  if (sky) {
    for (let i = 0; i < truth.length; i++) Object.assign(truth[i], sky.starTruth[i]);
    global.astrometry = skyTruth(scene, sky);
  }
  global.sky = { ...sk, unit: 'ADU above bias', center: frameCentre };
  global.noise = { ...scene.noise };
  global.hotPixels = hot;
  global.cosmicRays = rays;
  global.saturationAdu = scene.saturationAdu;
  global.renderMs = Math.round(performance.now() - t0);

  const o = scene.optics;
  const cards: SimResult['cards'] = [
    { key: 'IMAGETYP', value: 'LIGHT', comment: 'simulated light frame' },
    { key: 'EXPTIME', value: scene.exposureS, comment: '[s] exposure time' },
    { key: 'FOCALLEN', value: o.focalLengthMm, comment: '[mm] focal length' },
    { key: 'FOCRATIO', value: o.fNumber, comment: 'focal ratio' },
    { key: 'APTDIA', value: o.focalLengthMm / o.fNumber, comment: '[mm] aperture diameter' },
    { key: 'XPIXSZ', value: o.pixelSizeUm, comment: '[um] pixel size' },
    { key: 'YPIXSZ', value: o.pixelSizeUm, comment: '[um] pixel size' },
    { key: 'XBINNING', value: o.binning, comment: 'binning' },
    { key: 'YBINNING', value: o.binning, comment: 'binning' },
    { key: 'GAIN', value: gain, comment: '[e-/ADU] conversion gain' },
    { key: 'RDNOISE', value: scene.noise.readNoiseE, comment: '[e-] read noise' },
    { key: 'SATURATE', value: scene.saturationAdu, comment: '[ADU] saturation level' },
    { key: 'CREATOR', value: 'skyloupe simulate', comment: 'synthetic frame' },
    { key: 'SIMULATE', value: true, comment: 'skyloupe simulation: not a real observation' },
    { key: 'SIMSCHEM', value: scene.schema, comment: 'scene schema' },
    { key: 'SIMSEED', value: scene.seed, comment: 'scene random seed' },
    { key: 'SIMPSF', value: scene.psf.kind, comment: 'star renderer' },
    { key: 'SIMSTARS', value: truth.length, comment: 'stars in the truth file' },
  ];
  return { width: W, height: H, data, truth: { stars: truth, scene, global }, cards };
}

function renderAnalytic(
  scene: Scene, psf: AnalyticPsf, placed: PlacedStar[], data: Float32Array, truth: SimTruthStar[],
  vig: (x: number, y: number) => number,
): Record<string, unknown> {
  const W = scene.width, H = scene.height;
  const explicit = Array.isArray(scene.stars) ? scene.stars : null;
  const varyRng = new Rng(streamSeed(scene.seed, 2));
  const v = psf.vary;
  const cache = new Map<string, { major: number; minor: number }>();
  for (let i = 0; i < placed.length; i++) {
    const p = placed[i];
    const ex = explicit ? explicit[i] : null;
    // Draw every varied quantity for every star, so the draws do not shift when one range changes.
    const dMaj = v.fwhmMajorPx ? uniformIn(varyRng, v.fwhmMajorPx) : psf.fwhmMajorPx;
    const dRatio = v.axisRatio ? uniformIn(varyRng, v.axisRatio) : psf.fwhmMinorPx / psf.fwhmMajorPx;
    const dTheta = v.thetaDeg ? uniformIn(varyRng, v.thetaDeg) : psf.thetaDeg;
    const dBeta = v.beta ? uniformIn(varyRng, v.beta) : psf.beta;
    let maj = ex?.fwhmMajorPx ?? dMaj;
    let min = ex?.fwhmMinorPx ?? maj * dRatio;
    let theta = ex?.thetaDeg ?? dTheta;
    if (min > maj) { const t = min; min = maj; maj = t; theta += 90; }
    const beta = ex?.beta ?? dBeta;
    const vg = vig(p.x, p.y);
    const star: AnalyticStar = {
      model: psf.model, x: p.x, y: p.y, fluxE: p.fluxE * vg,
      fwhmMajorPx: maj, fwhmMinorPx: min, thetaDeg: normTheta(theta), beta,
    };
    const prof = makeProfile(star);
    const order = psf.supersample > 0 ? psf.supersample : autoOrder(prof);
    // Stop the wings where a pixel would get < 1e-3 e- (far below any read noise), or at the flux tolerance.
    const rendered = renderAnalyticStar(data, W, H, star, prof, psf.stampFluxTolerance, order, 1e-3);
    const key = `${star.model}|${maj}|${min}|${star.thetaDeg}|${star.model === 'moffat' ? beta : 0}`;
    let rec = cache.get(key);
    if (!rec) { rec = recordedFwhm(star); cache.set(key, rec); }
    const t: SimTruthStar = {
      id: i, x: p.x, y: p.y, xNominal: p.x, yNominal: p.y,
      fluxE: star.fluxE, fluxAdu: star.fluxE / scene.noise.gain, vignetting: vg, saturated: false,
      model: star.model, fwhmMajorPx: maj, fwhmMinorPx: min, thetaDeg: star.thetaDeg,
      recordedFwhmMajorPx: rec.major, recordedFwhmMinorPx: rec.minor, renderedFluxE: rendered,
    };
    if (star.model === 'moffat') t.beta = beta;
    truth.push(t);
  }
  return { psf: { kind: 'analytic', model: psf.model } };
}

function renderOptics(
  scene: Scene, psf: OpticsPsf, placed: PlacedStar[], data: Float32Array, truth: SimTruthStar[],
): Record<string, unknown> {
  const W = scene.width, H = scene.height;
  const field = opticsField(scene, psf);
  const vig = vignettingFn(scene, field.opticalCenterPx);
  const N = field.fNumber, eps = field.obstruction;
  const pUm = scene.optics.pixelSizeUm;
  let meanPhotons = 0;
  const vgs = placed.map((p) => vig(p.x, p.y));
  for (let i = 0; i < placed.length; i++) meanPhotons += placed[i].fluxE * vgs[i];
  if (meanPhotons > psf.maxPhotons) {
    throw new SkyloupeError('usage', `scene: the stars hold ${meanPhotons.toExponential(2)} photons, more than psf.maxPhotons ${psf.maxPhotons.toExponential(2)} (lower the fluxes or use the analytic PSF)`);
  }
  const bx = new Float64Array(CHUNK), by = new Float64Array(CHUNK);
  let photonsTotal = 0;
  for (let i = 0; i < placed.length; i++) {
    const p = placed[i];
    const lo = localOptics(field, p.x, p.y);
    const m = lo.rays;
    const rng = new Rng(streamSeed(scene.seed, 1000 + i));
    const fluxE = p.fluxE * vgs[i];
    const n = scene.noise.shotNoise ? poisson(rng, fluxE) : Math.round(fluxE);
    let inFrame = 0;
    for (let done = 0; done < n; done += CHUNK) {
      const k = Math.min(CHUNK, n - done);
      sampleOffsets(m, rng, k, bx, by);
      for (let j = 0; j < k; j++) {
        const ix = Math.floor(p.x + bx[j] + 0.5), iy = Math.floor(p.y + by[j] + 0.5);
        if (ix >= 0 && ix < W && iy >= 0 && iy < H) { data[iy * W + ix] += 1; inFrame++; }
      }
    }
    photonsTotal += n;
    const gm = geometricMoments(m);
    const sv = seeingVariance(m);
    const trailLen = Math.hypot(m.trailX, m.trailY);
    const armR = Math.hypot(m.rotArmX, m.rotArmY);
    truth.push({
      id: i, x: p.x + gm.meanX, y: p.y + gm.meanY, xNominal: p.x, yNominal: p.y,
      fluxE, fluxAdu: fluxE / scene.noise.gain, vignetting: vgs[i], saturated: false,
      photons: n, photonsInFrame: inFrame,
      radiusMm: lo.radiusMm, positionAngleDeg: lo.positionAngleDeg,
      defocusUm: lo.defocusUm, defocusSagittalUm: lo.defocusSagittalUm, defocusTangentialUm: lo.defocusTangentialUm,
      astigmatismUm: lo.astigmatismUm,
      blurRadialPx: lo.blurRadialPx, blurTangentialPx: lo.blurTangentialPx, defocusDiskPx: lo.defocusDiskPx,
      comaSagittalPx: lo.comaSagittalPx, comaTangentialPx: 3 * lo.comaSagittalPx, comaTailAngleDeg: lo.comaTailAngleDeg,
      trailLengthPx: trailLen, trailAngleDeg: trailLen > 0 ? normTheta(angleDeg(m.trailX, m.trailY)) : 0,
      rotationArcPx: Math.abs(m.rotAngle) * armR,
      geometricMomentsPx: { xx: gm.xx, yy: gm.yy, xy: gm.xy },
      seeingVariancePx: Number.isFinite(sv) ? sv : null,
      momentsPx: Number.isFinite(sv) ? { xx: gm.xx + sv, yy: gm.yy + sv, xy: gm.xy } : null,
      astigRadialMinusTangentialPx2:
        ((1 + eps * eps) * (lo.defocusTangentialUm ** 2 - lo.defocusSagittalUm ** 2)) / (16 * N * N * pUm * pUm),
    });
  }

  // Global truth: the scene's optics in the report's terms.
  const tx = field.tiltXUmPerMm, ty = field.tiltYUmPerMm;
  const tau = Math.hypot(tx, ty);
  const s = psf.aberrations.spacingErrorMm;
  // Corner zone: stars beyond 70% of the largest distance from the optical centre to a frame corner.
  // D = I_rad - I_tan about the optical centre (optics.md §5), of the geometric moments (all terms)
  // and of the defocus/astigmatism part alone; seeing cancels in D.
  const oc = field.opticalCenterPx;
  const rMax = Math.max(...[[0, 0], [W - 1, 0], [0, H - 1], [W - 1, H - 1]].map(([x, y]) => Math.hypot(x - oc.x, y - oc.y)));
  let dAll = 0, dAst = 0, nCorner = 0;
  for (const t of truth) {
    const dx = t.xNominal - oc.x, dy = t.yNominal - oc.y;
    if (Math.hypot(dx, dy) < 0.7 * rMax) continue;
    const phi = Math.atan2(dy, dx);
    const g = t.geometricMomentsPx!;
    dAll += (g.xx - g.yy) * Math.cos(2 * phi) + 2 * g.xy * Math.sin(2 * phi);
    dAst += t.astigRadialMinusTangentialPx2!;
    nCorner++;
  }
  const pattern = (d: number) => (nCorner === 0 || Math.abs(d) < 1e-3 ? 'none' : d > 0 ? 'radial' : 'tangential');
  return {
    photonsTotal,
    opticalCenterPx: field.opticalCenterPx,
    defocusCenterUm: field.defocusCenterUm,
    tilt: {
      // The reports' meaning (DESIGN.md): the change of best-focus position across the frame. A
      // point whose sensor lies deltaUm behind focus is sharp with the sensor deltaUm nearer the
      // lens, so best focus changes by minus the focus error's change.
      acrossFrameUm: { x: -psf.aberrations.tiltXUmAcross + 0, y: -psf.aberrations.tiltYUmAcross + 0 },
      focusErrorAcrossUm: { x: psf.aberrations.tiltXUmAcross, y: psf.aberrations.tiltYUmAcross },
      slopeUmPerMm: { x: tx, y: ty },
      // µm/mm = mrad (optics.md §4).
      mrad: tau,
      deg: (Math.atan(tau / 1000) * 180) / Math.PI,
      axisDeg: tau > 0 ? ((((Math.atan2(ty, tx) * 180) / Math.PI) % 180) + 180) % 180 : null,
    },
    curvature: {
      umPerMm2: field.curvatureUmPerMm2,
      fromRadiusUmPerMm2: field.curvatureFromRadiusUmPerMm2,
      fromSpacingUmPerMm2: field.curvatureFromSpacingUmPerMm2,
      effectiveRadiusMm: field.curvatureUmPerMm2 !== 0 ? 500 / field.curvatureUmPerMm2 : null,
    },
    astigmatism: {
      umPerMm2: field.astigmatismUmPerMm2,
      fromSpacingUmPerMm2: field.astigmatismFromSpacingUmPerMm2,
      definition: 'S-T focal separation z_S - z_T = k h^2 (µm, h in mm from the optical centre)',
    },
    spacing: {
      errorMm: s,
      // With the centre at medial focus, corner stars sit at δ ≈ c h^2 and D ∝ δ Δz ∝ s |s|.
      // From the spacing term alone (with the centre at medial focus).
      expectedPattern: s > 0 ? 'radial' : s < 0 ? 'tangential' : 'none',
      model: `INVENTED linear model, not a real corrector: curvature += ${SPACING_CURVATURE}*s, S-T separation += ${SPACING_ASTIGMATISM}*|s| (µm/mm^2, s in mm)`,
    },
    corners: {
      stars: nCorner,
      minRadiusPx: 0.7 * rMax,
      // Mean radial-minus-tangential second moment, px^2, and the pattern it implies.
      radialMinusTangentialPx2: nCorner ? dAll / nCorner : null,
      astigRadialMinusTangentialPx2: nCorner ? dAst / nCorner : null,
      pattern: pattern(nCorner ? dAll / nCorner : 0),
      astigPattern: pattern(nCorner ? dAst / nCorner : 0),
    },
    coma: {
      umPerMm: field.comaUmPerMm,
      pxPerMm: field.comaUmPerMm / pUm,
      centerPx: field.comaCenterPx,
      tail: field.comaUmPerMm > 0 ? 'outward' : field.comaUmPerMm < 0 ? 'inward' : 'none',
    },
    spherical: sphericalTruth(field.sphericalUm, N, eps, psf.aberrations.sphericalUm, psf.aberrations.sphericalFNumber),
    seeing: { ...psf.seeing, sigmaPx: field.seeingSigmaPx || null, alphaPx: field.seeing === SEEING_MOFFAT ? field.seeingAlphaPx : null },
    trailing: { ...psf.trailing },
    rotation: { centerPx: field.rotationCenterPx, angleRad: psf.rotation.angleRad },
    fNumber: N,
    obstruction: eps,
  };
}

/**
 * Where the geometric foci of a spherically aberrated beam lie, from the paraxial focus (µm, along
 * the light). Zone u = ρ^2 (uniform on [ε^2, 1]) crosses the axis at L u; the per-axis variance at
 * δ is E[(δ - L u)^2 u]/(8N^2) [DER from the ray model], smallest at δ = L E[u^2]/E[u] (2L/3
 * unobstructed); the least-confusion circle lies at 3L/4 with diameter TSA/2 (unobstructed;
 * Smith, Modern Optical Engineering, spherical aberration [MEM]).
 */
function sphericalTruth(L: number, N: number, eps: number, given: number, refN: number | null): Record<string, unknown> {
  const e2 = eps * eps;
  const Eu = (1 + e2) / 2;
  const Eu2 = (1 + e2 + e2 * e2) / 3;
  return {
    longitudinalUm: L,
    givenUm: given,
    givenAtFNumber: refN ?? N,
    transverseUm: L / (2 * N),
    kind: L < 0 ? 'under-corrected' : L > 0 ? 'over-corrected' : 'none',
    minimumRmsFocusUm: (L * Eu2) / Eu,
    midZoneFocusUm: L * (1 + e2) / 2,
    leastConfusionFocusUm: eps === 0 ? 0.75 * L : null,
    leastConfusionDiameterUm: eps === 0 ? Math.abs(L) / (4 * N) : null,
    reference: 'focus errors (defocusCenterUm, tilt, curvature) are measured from the paraxial focus',
  };
}
