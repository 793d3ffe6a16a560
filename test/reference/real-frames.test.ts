/**
 * The real-frame table (issue 13 item 5): for each real frame, and rendered frames that stand for
 * real situations, the findings a careful practitioner would accept, and those that must not rise
 * above "note" ('info' in the JSON), each with its reason and source beside it. A finding above
 * note that the table does not accept fails the test; so does an accepted finding marked required
 * that is missing.
 *
 * Some expectations rest on the measurement fixes of issue 13 and 14 made in the other half of
 * that work (saturation from every source, junk blobs set aside, undersampled stars measured):
 * they are marked `needs: 'measurement'` and are checked when the analysis carries those fixes
 * (its frame reports `saturation`), and listed as pending otherwise.
 *
 * Frames: ../shared/data/real copied into test/fixtures/real (see its README), Debian's
 * python-drizzle-testdata HST frame (apt; .ci/run installs it, a missing package fails the test as
 * everywhere in this suite), and rendered frames: a circular-fisheye all-sky disc
 * (fisheye-render.ts), a heavily vignetted field, a field saturating at 62 500 ADU.
 */
import { existsSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { analyzeFrame, type Analysis } from '../../core/analyze.ts';
import { readFrame } from '../../core/frame/read.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { renderScene } from '../../core/simulate/render.ts';
import type { SceneInput } from '../../core/simulate/scene.ts';
import { diagnose, type DiagnoseResult } from '../../core/diagnose/index.ts';
import { contextOf } from '../../core/diagnose/context.ts';
import { axisDiffDeg } from '../../core/field/stats.ts';
import { FISHEYE, renderFisheye } from './fisheye-render.ts';
import { requireSextractor, runSextractor } from './crosscheck-sextractor.ts';

const FIX = path.resolve('test/fixtures/real');
const HST = '/usr/share/python-drizzle/test_data/j8bt06nyq_flt.fits';

type Severity = 'major' | 'minor' | 'info';
interface Accept {
  code: string;
  /** Severities the practitioner would accept for it. */
  severities: Severity[];
  /** It must be there. */
  required?: boolean;
  /** Further checks on the diagnosis behind it. */
  check?: (r: DiagnoseResult, a: Analysis) => void;
  reason: string;
  source: string;
  needs?: 'measurement';
}
interface Frame {
  name: string;
  load: () => Promise<Analysis>;
  accept: Accept[];
  /** Checks that are no finding (data region, coverage), with reason and source. */
  also?: { what: string; check: (r: DiagnoseResult, a: Analysis) => void; reason: string; source: string; needs?: 'measurement' }[];
  /** Findings not accepted above note: everything else; the reason and source for the frame as a whole. */
  nothingElse: { reason: string; source: string; needs?: 'measurement' };
}

const fromFile = (file: string) => async () => analyzeFrame(await readFrame(file), { workers: 0 });
const rendered = (make: () => ReturnType<typeof renderScene>) => async () => analyzeFrame(decodeFits(fitsBytes(make())), { workers: 0 });
const hasMeasurementFixes = (a: Analysis) => 'saturation' in a.frame;

/** Heavy vignetting through a faultless lens (invented scene): corner illumination 0.3. */
function vignetted(): SceneInput {
  return {
    width: 1200, height: 900, seed: 17,
    optics: { pixelSizeUm: 3.76, focalLengthMm: 400, fNumber: 4 },
    stars: { count: 600, fluxMinE: 3000, fluxMaxE: 300000 },
    psf: { kind: 'optics', seeing: { fwhmPx: 2.6 }, aberrations: {} },
    sky: { level: 900 }, vignetting: { cornerIllumination: 0.3, centerPx: null },
    noise: { gain: 1, readNoiseE: 3, biasAdu: 500 },
  } as SceneInput;
}

/** A faultless lens, catalogue-like brightness (steep counts, a few very bright stars), clipped at 62 500 ADU (issue 14). */
function saturating(): SceneInput {
  return {
    width: 1500, height: 1000, seed: 23,
    optics: { pixelSizeUm: 3.76, focalLengthMm: 400, fNumber: 4 },
    stars: { count: 900, fluxMinE: 4000, fluxMaxE: 4e6, slope: 2 },
    psf: { kind: 'optics', seeing: { fwhmPx: 2.2 }, aberrations: {} },
    sky: { level: 800 }, noise: { gain: 1, readNoiseE: 3, biasAdu: 500 },
    saturationAdu: 62500,
  } as SceneInput;
}

const optical = ['TILT', 'SPACING', 'FIELD_CURVATURE', 'COMA', 'COMA_UNIFORM', 'ASTIGMATISM_DECENTRED', 'TRAILING', 'FIELD_ROTATION'];

const TABLE: Frame[] = [
  {
    name: 'openstartracker feb16_2 (star tracker, 8-bit)',
    load: fromFile(path.join(FIX, 'openstartracker_feb16_2.new.fits')),
    accept: [{
      code: 'TRAILING', severities: ['major'], required: true,
      check: (r) => expect(axisDiffDeg(r.diagnosis.trailing.angleDeg!, -67)).toBeLessThan(5),
      reason: 'large stars all elongated the same way across the field: a uniform elongation, not an optical field pattern',
      source: 'the data README (ellipticity about 0.5 at about -67 deg); Source Extractor median elongation 2.00 (same README)',
      needs: 'measurement',
    }],
    nothingElse: {
      reason: 'a uniform elongation explains the frame; 80 junk blobs of 2-4 ADU must not make a pattern of their own',
      source: 'the data README; issue 13 (the junk blobs)', needs: 'measurement',
    },
  },
  ...(['Alt40_Azi45', 'Alt60_Azi135'] as const).map((alt): Frame => ({
    name: `tetra3 ${alt} (machine-vision camera, 35 mm f/1.9, undersampled)`,
    load: fromFile(path.join(FIX, `tetra3_2019-07-29T204726_${alt}_Try1.fits`)),
    accept: [{
      code: 'UNDERSAMPLED', severities: ['info'],
      check: (r) => expect(r.diagnosis.coverage.undersampled).toBe(true),
      reason: 'stars of FWHM about 1.4 px are below the sampling a shape diagnosis needs (about 1.5 px)',
      source: 'the data README (FWHM about 1.4 px); Source Extractor median FWHM 1.39 / 1.45 px (same README); Howell, optics.md 1.6',
    }, {
      code: 'SMALL_STARS', severities: ['info'],
      check: (r) => expect(r.diagnosis.coverage.medianFwhmPx!).toBeLessThan(2),
      reason: 'stars under 2 px: their elongation and flare follow the pixel grid, so only sizes are judged',
      source: 'the data README (FWHM about 1.4 px); the LSST notebook on biased moments of undersampled sources (optics.md 1.6)',
    }, {
      code: 'CLEAN', severities: ['info'],
      reason: 'a faultless verdict on what the stars can show is acceptable',
      source: 'issue 13 (nothing wrong with these lenses is known)',
    }],
    also: [{
      what: 'no POOR_COVERAGE: the clean stars cover all 9 zones (Source Extractor: 5-17 stars with FLAGS 0 and SNR > 10 in each)',
      check: (r, a) => {
        expect(r.findings.map((f) => f.code)).not.toContain('POOR_COVERAGE');
        expect(r.diagnosis.coverage.zonesWithStars).toBe(9);
        // Source Extractor's own count per zone: FLAGS 0 and SNR above skyloupe's field threshold
        // (MIN_FIELD_SNR = 10); coverage asks for 3 stars a zone
        requireSextractor();
        const sex = runSextractor(path.join(FIX, `tetra3_2019-07-29T204726_${alt}_Try1.fits`)).stars.filter((s) => s.flags === 0 && s.snr > 10);
        const zones = new Array(9).fill(0);
        for (const s of sex) zones[Math.min(2, Math.floor((3 * (s.y + 0.5)) / a.frame.height)) * 3 + Math.min(2, Math.floor((3 * (s.x + 0.5)) / a.frame.width))]++;
        expect(Math.min(...zones)).toBeGreaterThanOrEqual(3);
      },
      reason: 'stars cover the whole frame; only their shapes were hard to measure',
      source: 'Source Extractor 2.25 run here on the same frame (Debian source-extractor)',
    }, {
      what: 'the sky fills the frame (strong vignetting, but no black region)',
      check: (_r, a) => expect(a.frame.dataRegion.kind).toBe('full'),
      reason: 'a rectilinear lens on a small sensor: vignetted corners still hold sky and stars',
      source: 'the data README (strong vignetting); Source Extractor finds stars in every zone',
    }],
    nothingElse: {
      reason: 'an 11-degree field through a 35 mm lens with stars of 1.4 px: no tilt, spacing, coma or curvature can be read from it, and none is known',
      source: 'the data README; issue 13',
    },
  })),
  ...[{
    name: 'HST ACS/HRC 47 Tuc (crowded, float32 with a DQ extension)',
    load: async () => {
      if (!existsSync(HST)) throw new Error(`${HST} is missing: apt-get install -y python-drizzle-testdata (CI installs it)`);
      return fromFile(HST)();
    },
    accept: [{
      code: 'PIXEL_SHAPE', severities: ['info'], required: true,
      check: (r) => {
        const ps = r.diagnosis.trailing.pixelShape!;
        expect(ps.explains).toBe(true);
        expect(ps.axisRatio).toBeCloseTo(1.18, 1);
        expect(axisDiffDeg(ps.angleDeg, -72)).toBeLessThan(3);
      },
      reason: "every star is stretched 1.18:1 at -72 deg the same way: the detector's unequal pixel scales on the sky, not trailing",
      source: 'the WCS CD matrix of the SCI header; issue 13 (measured with astropy)',
    }, {
      code: 'COMA_UNIFORM', severities: ['info'],
      check: (r) => expect(r.diagnosis.coma.uniformAlongPixelAxis).toBe(true),
      reason: 'a faint flare along the pixel columns everywhere is what charge-transfer trails of a CCD leave; collimation cannot be told from it in one frame',
      source: 'the direction (within 10 deg of the columns); charge-transfer trails of HST CCDs (common practice, from memory)',
    }, {
      code: 'SMALL_STARS', severities: ['info'],
      reason: 'the HRC PSF is about 2 px wide: elongation and flare follow the pixel grid as much as the optics',
      source: 'Source Extractor and skyloupe median FWHM about 2 px (issue 13); optics.md 1.6',
    }, {
      code: 'CLEAN', severities: ['info'], reason: 'nothing to act on', source: 'as above',
    }, {
      code: 'OPTICS_UNKNOWN', severities: ['info'],
      reason: 'the header gives no f-number or pixel size in the cards skyloupe reads',
      source: 'the SCI and primary headers',
    }],
    nothingElse: {
      reason: 'a space telescope with maintained alignment and focus; crowding and saturated cores (DQ) must not invent tilt, trailing or coma',
      source: 'issue 13 (false MAJOR trailing and minor tilt and coma before); the DQ extension',
    },
  } as Frame],
  {
    name: 'rendered all-sky frame through a circular fisheye (disc radius 0.48 of the width, black corners)',
    load: rendered(() => renderFisheye({ seed: 11 })),
    accept: [{
      code: 'FIELD_CURVATURE', severities: ['minor', 'info'],
      check: (r) => {
        const g = r.diagnosis.curvature.roundGrowthRatio!;
        expect(g).toBeGreaterThan(1.15);
        expect(g).toBeLessThan(1.5);
      },
      reason: "stars soften 1.2-1.4x toward the disc's edge, as the lens does; worth a look at most, no spacing or shim corrects it",
      source: 'the scene (curved medial surface, R = 110 mm: FWHM about 1.3x at the disc edge); issue 13 (independent measurement of the real frame: 1.2-1.4x)',
    }, {
      code: 'STOP_DOWN', severities: ['info'], reason: 'advice that follows a softening finding', source: 'optics.md 7',
    }],
    also: [{
      what: 'the image circle found: centre within 3 px, radius within 1 %; no star measured outside it',
      check: (r, a) => {
        const reg = a.frame.dataRegion;
        expect(reg.kind).toBe('circle');
        const c = reg.circle!;
        expect(Math.hypot(c.xPx - (FISHEYE.width - 1) / 2, c.yPx - (FISHEYE.height - 1) / 2)).toBeLessThan(3);
        expect(Math.abs(c.radiusPx / FISHEYE.discRadiusPx - 1)).toBeLessThan(0.01);
        for (const s of a.stars) expect(Math.hypot(s.x - c.xPx, s.y - c.yPx)).toBeLessThan(c.radiusPx);
        // vignetting 1 - 0.7 (r / r_corner)^2 at r = 720 of 901 px: 0.55
        expect(Math.abs(reg.vignetting!.edgeIllumination - 0.55)).toBeLessThan(0.07);
        expect(r.findings.map((f) => f.code)).not.toContain('POOR_COVERAGE');
      },
      reason: 'the corners hold no sky: detections and zones there are no data',
      source: 'the scene (disc drawn at the frame centre, radius 720 px; vignetting law of core/simulate)',
    }],
    nothingElse: {
      reason: 'no tilt, no coma, no trailing and no spacing error in the scene: only the lens\'s round off-axis softening, vignetting and black corners',
      source: 'the scene (fisheye-render.ts)',
    },
  },
  {
    name: 'rendered field with heavy vignetting (corner illumination 0.3), faultless lens',
    load: rendered(() => renderScene(vignetted() as Parameters<typeof renderScene>[0])),
    accept: [{ code: 'CLEAN', severities: ['info'], required: true, reason: 'faultless lens', source: 'the scene' }],
    also: [{
      what: 'the sky fills the frame',
      check: (_r, a) => expect(a.frame.dataRegion.kind).toBe('full'),
      reason: 'vignetting dims the corners smoothly; they still hold sky',
      source: 'the scene',
    }],
    nothingElse: { reason: 'vignetting changes brightness, not star shapes', source: 'the scene; optics.md 7' },
  },
  {
    name: 'rendered field clipped at 62 500 ADU (16-bit, below the ceiling), faultless lens',
    load: rendered(() => renderScene(saturating() as Parameters<typeof renderScene>[0])),
    accept: [{ code: 'CLEAN', severities: ['info'], reason: 'faultless lens', source: 'the scene' }],
    nothingElse: {
      reason: 'clipped bright stars (FWHM 4-6 px, flat cores) are no optical fault: they must invent no tilt, whether flagged saturated or outvoted by the zone medians',
      source: 'issue 14 (a "23 sigma" tilt from such stars); the scene',
    },
  },
];

describe('real frames: only the findings a careful practitioner would accept', () => {
  for (const f of TABLE) {
    it(f.name, async () => {
      const a = await f.load();
      const r = diagnose(a.stars, contextOf(a));
      const fixed = hasMeasurementFixes(a);
      const pending: string[] = [];
      const live = <T extends { needs?: 'measurement' }>(x: T, what: string) => {
        if (x.needs === 'measurement' && !fixed) { pending.push(what); return false; }
        return true;
      };
      const lines = r.findings.map((x) => `${x.severity}:${x.code}`).join(' ');
      console.log(`${f.name}: ${lines || 'none'}${a.frame.dataRegion.kind !== 'full' ? ` [sky: ${a.frame.dataRegion.kind}, ${a.detection.outsideData} outside]` : ''}`);
      for (const acc of f.accept) {
        if (!live(acc, acc.code)) continue;
        const found = r.findings.find((x) => x.code === acc.code);
        if (acc.required) expect(found, `${acc.code} missing: ${acc.reason} (${acc.source})`).toBeDefined();
        if (found) {
          expect(acc.severities, `${acc.code} at ${found.severity}: ${acc.reason}`).toContain(found.severity);
          acc.check?.(r, a);
        }
      }
      for (const x of f.also ?? []) if (live(x, x.what)) x.check(r, a);
      if (live(f.nothingElse, 'nothing else above note')) {
        const accepted = new Set(f.accept.map((x) => x.code));
        const above = r.findings.filter((x) => x.severity !== 'info' && !accepted.has(x.code));
        expect(above.map((x) => `${x.code} (${x.severity}): ${x.message}`), `${f.nothingElse.reason} (${f.nothingElse.source})`).toEqual([]);
        for (const code of optical) if (!accepted.has(code)) expect(r.findings.find((x) => x.code === code && x.severity !== 'info')).toBeUndefined();
      }
      if (pending.length) console.log(`  pending the measurement fixes of issues 13/14: ${pending.join('; ')}`);
    });
  }
});
