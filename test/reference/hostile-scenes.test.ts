/**
 * Hostile sky frames (issue 4): a satellite trail, aircraft lights, nebulosity, a Milky Way
 * star field, a bright Moon gradient, dew halos and heavy vignetting, rendered by core/simulate
 * and run through the real pipeline and report. The artefacts the simulator does not model
 * (trail, aircraft dashes, glow, dew halos) are painted onto its output here, with Poisson
 * noise, before FITS encoding. Checks, against the simulator's truth:
 * (a) completeness of truth stars with SNR >= 20, SNR = F / sqrt(F + 4 pi sx sy b) (the
 *     noise-equivalent area of a Gaussian, King 1983, PASP 95, 163; from memory);
 * (b) detections on the trail or the aircraft dashes are not clean stars;
 * (c) the artefact does not make the diagnosis report trailing, tilt or spacing;
 * (d) glow and gradients add at most ~1 % clean stars that match no truth star.
 */
import { describe, expect, it } from 'vitest';
import { renderScene, type SimResult } from '../../core/simulate/render.ts';
import { parseScene, type SceneInput } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { analyzeFrame, type Analysis } from '../../core/analyze.ts';
import { reportFromAnalysis } from '../../core/report/from-analysis.ts';
import { mulberry32, normal } from '../helpers/rng.ts';
import type { Diagnosis } from '../../core/diagnose/types.ts';
import { formatSummary } from '../../core/cli/summary.ts';

const W = 1200;
const H = 900;
const GAIN = 1;
const READ_E = 3;

function base(o: Partial<SceneInput> = {}): SceneInput {
  return {
    width: W, height: H, seed: 7,
    optics: { pixelSizeUm: 3.76, focalLengthMm: 400, fNumber: 4 },
    stars: { count: 500, fluxMinE: 3000, fluxMaxE: 300000, minSeparationPx: 12 },
    psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 3, fwhmMinorPx: 3 },
    sky: { level: 800 },
    noise: { gain: GAIN, readNoiseE: READ_E, biasAdu: 500 },
    ...o,
  } as SceneInput;
}

/** Adds expected signal e (ADU, gain 1) with Poisson noise (normal approximation, fine above ~10 e). */
function painter(sim: SimResult, seed: number) {
  const rnd = normal(mulberry32(seed));
  return (i: number, e: number) => {
    if (e <= 0.05) return;
    sim.data[i] = Math.min(65535, Math.round(sim.data[i] + e + Math.sqrt(e) * rnd()));
  };
}

/** A satellite: a straight line across the frame, Gaussian across (sigma px), peak ADU. */
function paintTrail(sim: SimResult, x0: number, y0: number, angleDeg: number, sigma: number, peak: number, seed: number) {
  const add = painter(sim, seed);
  const c = Math.cos((angleDeg * Math.PI) / 180);
  const s = Math.sin((angleDeg * Math.PI) / 180);
  for (let y = 0; y < H; y++) for (let x = 0; x < W; x++) {
    const d = -(x - x0) * s + (y - y0) * c; // distance across the line
    if (Math.abs(d) > 5 * sigma) continue;
    add(y * W + x, peak * Math.exp((-d * d) / (2 * sigma * sigma)));
  }
}

/** Aircraft strobes: dashes (elongated Gaussians) at a fixed step along a line. Returns their centres. */
function paintDashes(sim: SimResult, x0: number, y0: number, angleDeg: number, step: number, n: number, peak: number, seed: number) {
  const add = painter(sim, seed);
  const c = Math.cos((angleDeg * Math.PI) / 180);
  const s = Math.sin((angleDeg * Math.PI) / 180);
  const centres: { x: number; y: number }[] = [];
  const sa = 3; // along the flight path, px
  const sc = 1.3; // across
  for (let k = 0; k < n; k++) {
    const cx = x0 + k * step * c;
    const cy = y0 + k * step * s;
    centres.push({ x: cx, y: cy });
    for (let y = Math.floor(cy - 15); y <= cy + 15; y++) for (let x = Math.floor(cx - 15); x <= cx + 15; x++) {
      if (x < 0 || y < 0 || x >= W || y >= H) continue;
      const u = (x - cx) * c + (y - cy) * s;
      const v = -(x - cx) * s + (y - cy) * c;
      add(y * W + x, peak * Math.exp(-(u * u) / (2 * sa * sa) - (v * v) / (2 * sc * sc)));
    }
  }
  return centres;
}

function glowAt(glows: { x: number; y: number; sigma: number; peak: number }[], x: number, y: number): number {
  let v = 0;
  for (const g of glows) v += g.peak * Math.exp(-((x - g.x) ** 2 + (y - g.y) ** 2) / (2 * g.sigma * g.sigma));
  return v;
}

interface Outcome { analysis: Analysis; report: ReturnType<typeof reportFromAnalysis>; sim: SimResult }

async function run(sim: SimResult): Promise<Outcome> {
  const analysis = await analyzeFrame(decodeFits(fitsBytes(sim)), { workers: 0 });
  return { analysis, report: reportFromAnalysis(analysis, 'hostile.fits'), sim };
}

/**
 * (a) and (d): the share of SNR >= 20 truth stars with a detection within r px, and the share
 * of clean stars that lie within r px of no truth star and of no painted artefact.
 */
function score(o: Outcome, skyAdu: (x: number, y: number) => number, opts: { r?: number; fluxScale?: (x: number, y: number) => number; artefacts?: { x: number; y: number }[] } = {}) {
  const r = opts.r ?? 2.5;
  const stars = o.analysis.stars;
  const cell = 16;
  const gw = Math.ceil(W / cell);
  const grid = new Map<number, number[]>();
  stars.forEach((s, i) => {
    const k = Math.floor(s.y / cell) * gw + Math.floor(s.x / cell);
    (grid.get(k) ?? grid.set(k, []).get(k)!).push(i);
  });
  const near = (x: number, y: number) => {
    const out: number[] = [];
    const gx = Math.floor(x / cell);
    const gy = Math.floor(y / cell);
    for (let dy = -1; dy <= 1; dy++) for (let dx = -1; dx <= 1; dx++) {
      for (const i of grid.get((gy + dy) * gw + gx + dx) ?? []) if (Math.hypot(stars[i].x - x, stars[i].y - y) <= r) out.push(i);
    }
    return out;
  };
  const matched = new Set<number>();
  let bright = 0;
  let found = 0;
  for (const t of o.sim.truth.stars) {
    for (const i of near(t.x, t.y)) matched.add(i);
    if (t.x < 12 || t.y < 12 || t.x > W - 13 || t.y > H - 13) continue;
    const sx = (t.fwhmMajorPx ?? 3) / 2.354820045;
    const sy = (t.fwhmMinorPx ?? 3) / 2.354820045;
    const f = t.fluxE * (opts.fluxScale?.(t.x, t.y) ?? 1);
    const b = skyAdu(t.x, t.y) * GAIN + READ_E * READ_E;
    if (f / Math.sqrt(f + 4 * Math.PI * sx * sy * b) < 20) continue;
    bright++;
    if (near(t.x, t.y).length > 0) found++;
  }
  for (const a of opts.artefacts ?? []) for (const i of near(a.x, a.y)) matched.add(i);
  const clean = stars.filter((s) => s.flags.length === 0);
  const spurious = stars.filter((s, i) => s.flags.length === 0 && !matched.has(i)).length;
  return { bright, completeness: found / bright, clean: clean.length, spuriousClean: spurious / Math.max(1, clean.length) };
}

function log(name: string, o: Outcome, sc: ReturnType<typeof score>) {
  const d = (o.report.diagnosis as Diagnosis);
  console.log(`${name}: ${o.analysis.detection.candidates} detections, flagged ${JSON.stringify(o.analysis.detection.flagged)}; ` +
    `SNR>=20 truth ${sc.bright}, completeness ${(100 * sc.completeness).toFixed(1)} %, clean ${sc.clean}, spurious clean ${(100 * sc.spuriousClean).toFixed(2)} %; ` +
    `trailing ${d.trailing.significant}, tilt ${d.tilt.significant}, spacing ${d.spacing.pattern}`);
}

function expectNoArtefactDiagnosis(o: Outcome) {
  const d = (o.report.diagnosis as Diagnosis);
  expect(d.trailing.significant).toBe(false);
  expect(d.tilt.significant).toBe(false);
  expect(d.spacing.pattern).toBe('none');
}

const flatSky = () => 800;

describe('hostile scenes', () => {
  it.each([
    { x0: 600, y0: 450, ang: 23, sig: 1.4, peak: 600 },
    // fainter (about 4x the sky noise per pixel), steeper and off-centre
    { x0: 300, y0: 500, ang: -62.5, sig: 1.0, peak: 120 },
  ])('satellite trail ($peak ADU at $ang deg) across a tracked field: trail detections flagged, no trailing reported', async ({ x0, y0, ang, sig, peak }) => {
    const sim = renderScene(parseScene(base({ seed: 101 })));
    paintTrail(sim, x0, y0, ang, sig, peak, 1);
    const o = await run(sim);
    const sc = score(o, flatSky);
    log(`satellite ${peak} ADU`, o, sc);
    // detections within 3 sigma of the trail axis that are not truth stars
    const c = Math.cos((ang * Math.PI) / 180);
    const s = Math.sin((ang * Math.PI) / 180);
    const onTrail = o.analysis.stars.filter((st) => Math.abs(-(st.x - x0) * s + (st.y - y0) * c) < 3 * sig + 2);
    const cleanOnTrail = onTrail.filter((st) => st.flags.length === 0);
    for (const st of cleanOnTrail) console.log(`  clean on the trail: ${st.x.toFixed(1)}, ${st.y.toFixed(1)}, SNR ${st.snr.toFixed(0)}, fwhm ${st.fwhmPx.toFixed(2)} e ${st.ellipticity.toFixed(2)}`);
    console.log(`  on the trail: ${onTrail.length} detections, ${cleanOnTrail.length} clean, report flagged ${JSON.stringify(o.report.detection.flagged)}`);
    expect(sc.completeness).toBeGreaterThanOrEqual(0.9);
    // a star under the trail is measured with the trail's light: not clean either
    expect(cleanOnTrail.length).toBe(0);
    expect(o.report.detection.flagged.streak ?? 0).toBeGreaterThanOrEqual(onTrail.length - 3);
    expect(formatSummary(o.report)).toMatch(/set aside: .*\d+ streak/);
    expectNoArtefactDiagnosis(o);
  });

  it('aircraft lights (a dotted line of dashes): dashes flagged, no trailing reported', async () => {
    const sim = renderScene(parseScene(base({ seed: 102 })));
    const dashes = paintDashes(sim, 80, 820, -32, 28, 40, 2500, 2);
    const o = await run(sim);
    const sc = score(o, flatSky, { artefacts: dashes });
    log('aircraft', o, sc);
    const onDash = o.analysis.stars.filter((st) => dashes.some((d) => Math.hypot(d.x - st.x, d.y - st.y) < 4));
    const cleanOnDash = onDash.filter((st) => st.flags.length === 0);
    console.log(`  on the dashes: ${onDash.length} detections, ${cleanOnDash.length} clean`);
    expect(sc.completeness).toBeGreaterThanOrEqual(0.9);
    expect(cleanOnDash.length).toBe(0);
    expect(onDash.filter((st) => st.flags.includes('streak')).length).toBeGreaterThanOrEqual(0.9 * dashes.length);
    expectNoArtefactDiagnosis(o);
  });

  const glows = [{ x: 420, y: 380, sigma: 140, peak: 3000 }, { x: 850, y: 600, sigma: 60, peak: 1500 }];
  async function nebula(seed = 103): Promise<Outcome> {
    const sim = renderScene(parseScene(base({ seed })));
    const add = painter(sim, 3);
    for (let y = 0; y < H; y++) for (let x = 0; x < W; x++) add(y * W + x, glowAt(glows, x, y));
    return run(sim);
  }


  it('nebulosity (large diffuse glow): stars found, no spurious clean stars, no trailing', async () => {
    const o = await nebula();
    const sc = score(o, (x, y) => 800 + glowAt(glows, x, y));
    log('nebulosity', o, sc);
    expect(sc.completeness).toBeGreaterThanOrEqual(0.9);
    expect(sc.spuriousClean).toBeLessThanOrEqual(0.01);
    const d = o.report.diagnosis as Diagnosis;
    expect(d.trailing.significant).toBe(false);
    expect(d.spacing.pattern).toBe('none');
  });

  // The sky mesh (3x3 median over 64 px boxes) leaves about 17 % of a sigma-140 px glow in the
  // residual; before the stars' moments took off the level their PSF fit found under them
  // (measure.ts), that offset widened them and the diagnosis fitted a tilt (significance 6.7,
  // ~4 mrad, seed 103).
  it('nebulosity does not make the diagnosis report tilt (the moments take off the local level left under the glow)', async () => {
    // three star fields under the same glow; measured with this code on seeds 103-107: without
    // the glow the significance is 1.4-3.2, with it 0.7-2.8 (the threshold is 4)
    for (const seed of [103, 104, 106]) {
      const t = (((await nebula(seed)).report.diagnosis) as Diagnosis).tilt;
      console.log(`nebulosity seed ${seed}: tilt significance ${t.significance.toFixed(2)}, ${t.tiltMrad?.toFixed(2)} mrad`);
      expect(t.significant).toBe(false);
    }
  });

  it('bright Moon gradient (sky 5x from one side to the other)', async () => {
    // sky(x) = level + gradientX (x - W/2) / W: 333 to 1667 ADU across the frame
    const sim = renderScene(parseScene(base({ seed: 104, sky: { level: 1000, gradientX: 1333 } })));
    const o = await run(sim);
    const sc = score(o, (x) => 1000 + 1333 * (x - W / 2) / W);
    log('moon', o, sc);
    expect(sc.completeness).toBeGreaterThanOrEqual(0.9);
    expect(sc.spuriousClean).toBeLessThanOrEqual(0.01);
    expectNoArtefactDiagnosis(o);
  });

  it('Milky Way crowding (about 5000 stars on 1 Mpx)', async () => {
    const sim = renderScene(parseScene(base({ seed: 105, stars: { count: 5000, fluxMinE: 1500, fluxMaxE: 200000, minSeparationPx: 4 } })));
    const o = await run(sim);
    const sc = score(o, flatSky);
    log('milky way', o, sc);
    // blends: a star within ~2 FWHM of a brighter one is not separable at all; measured bound
    expect(sc.completeness).toBeGreaterThanOrEqual(0.85);
    expect(sc.spuriousClean).toBeLessThanOrEqual(0.02);
    // a dense field has many chance alignments: few of them may look like a streak
    expect((o.analysis.detection.flagged.streak ?? 0) / o.analysis.detection.candidates).toBeLessThanOrEqual(0.01);
    expect((o.report.diagnosis as Diagnosis).trailing.significant).toBe(false);
  });

  it('dew: every star with a big soft halo (40 % of its light, sigma 10 px)', async () => {
    const sim = renderScene(parseScene(base({ seed: 106 })));
    const add = painter(sim, 6);
    const halo = new Float64Array(W * H);
    const hs = 10;
    for (const t of sim.truth.stars) {
      const a = (0.4 * t.fluxE) / (2 * Math.PI * hs * hs);
      for (let y = Math.max(0, Math.floor(t.y - 5 * hs)); y <= Math.min(H - 1, t.y + 5 * hs); y++) {
        for (let x = Math.max(0, Math.floor(t.x - 5 * hs)); x <= Math.min(W - 1, t.x + 5 * hs); x++) {
          halo[y * W + x] += a * Math.exp(-((x - t.x) ** 2 + (y - t.y) ** 2) / (2 * hs * hs));
        }
      }
    }
    for (let i = 0; i < W * H; i++) add(i, halo[i]);
    const o = await run(sim);
    // the core keeps 60 % of the light
    const sc = score(o, flatSky, { fluxScale: () => 0.6 });
    log('dew', o, sc);
    expect(sc.completeness).toBeGreaterThanOrEqual(0.9);
    expect(sc.spuriousClean).toBeLessThanOrEqual(0.01);
    expectNoArtefactDiagnosis(o);
  });

  it('heavy vignetting (corner illumination 0.3)', async () => {
    const sim = renderScene(parseScene(base({ seed: 107, vignetting: { cornerIllumination: 0.3 } })));
    const rc = Math.hypot((W - 1) / 2, (H - 1) / 2);
    const illum = (x: number, y: number) => 1 - 0.7 * (Math.hypot(x - (W - 1) / 2, y - (H - 1) / 2) / rc) ** 2;
    const o = await run(sim);
    // truth fluxes are already vignetted (core/simulate/render.ts); the sky is scaled here
    const sc = score(o, (x, y) => 800 * illum(x, y));
    log('vignetting', o, sc);
    expect(sc.completeness).toBeGreaterThanOrEqual(0.9);
    expect(sc.spuriousClean).toBeLessThanOrEqual(0.01);
    expectNoArtefactDiagnosis(o);
  });
});
