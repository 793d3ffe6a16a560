/**
 * The desktop program's report carries the same findings as the command line's on the same frame,
 * the plate solution's included (distortion, focal length): one report, two front ends. Frame: a
 * real tetra3 frame (../shared/data/real, ESA/Gustav Pettersson, CC BY-SA 3.0 IGO) that places
 * on the sky with 0.17 % pincushion distortion (matched to astrometry.net in the sky reference tests).
 */
import { describe, expect, it, beforeAll } from 'vitest';
import { existsSync } from 'node:fs';
import { readFrame } from '../../core/frame/read.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { reportFromAnalysis } from '../../core/report/from-analysis.ts';
import { buildReport } from '../../core/report/build.ts';
import { diagnoseExtras } from '../../app/engine/diagnosis.ts';

const REAL = '/work/shared/data/real/tetra3_2019-07-29T204726_Alt60_Azi135_Try1.fits';

describe('findings on the page and on the command line', () => {
  // never skipped silently (README): without the package this fails and says what to install
  beforeAll(() => { if (!existsSync(REAL)) throw new Error(`${REAL} is missing: the real frames live in ../shared/data/real`); });
  it('are the same, the distortion finding included', async () => {
    const a = await analyzeFrame(await readFrame(REAL), { workers: 0 });
    expect(a.astrometry?.solved).toBe(true);
    const cli = reportFromAnalysis(a, REAL);
    const page = buildReport(a, REAL, diagnoseExtras(a));
    expect((page.findings ?? []).map((f) => f.code)).toEqual((cli.findings ?? []).map((f) => f.code));
    expect((page.findings ?? []).map((f) => f.message)).toEqual((cli.findings ?? []).map((f) => f.message));
    expect((page.findings ?? []).some((f) => f.code === 'DISTORTION')).toBe(true);
  }, 120_000);
});
