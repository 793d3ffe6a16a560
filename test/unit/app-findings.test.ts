/**
 * The page's engine and the CLI give one set of findings for one frame (issue 12 items 2-3:
 * the same story everywhere): the desktop pipeline (app/engine/pipeline.ts) and the CLI's report
 * (core/report/from-analysis.ts) on a real frame that places on the sky, the tetra3 star-tracker
 * frame (test/fixtures/real/README.md). Its clean stars cover all nine zones (Source Extractor
 * finds 5-17 clean stars in each, test/reference/real-frames.test.ts), so neither may say
 * POOR_COVERAGE.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { runPipeline } from '../../app/engine/pipeline.ts';
import { decodeFrame } from '../../core/frame/read.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { reportFromAnalysis } from '../../core/report/from-analysis.ts';

const FRAME = path.resolve('test/fixtures/real/tetra3_2019-07-29T204726_Alt60_Azi135_Try1.fits');

describe('one set of findings in the page and the CLI', () => {
  it('tetra3 (Alt60): the same codes, severities and words; the plate solution\'s findings in both; no POOR_COVERAGE', async () => {
    const bytes = new Uint8Array(readFileSync(FRAME));
    const page = await runPipeline({ name: path.basename(FRAME), bytes, remembered: {}, workers: 0 });
    const cli = reportFromAnalysis(await analyzeFrame(await decodeFrame(bytes, path.basename(FRAME)), { workers: 0 }), FRAME);
    const pick = (fs: { code: string; severity: string; message: string }[] | undefined) => (fs ?? []).map((f) => [f.code, f.severity, f.message]);
    expect(pick(page.result.report.findings)).toEqual(pick(cli.findings));
    const codes = (cli.findings ?? []).map((f) => f.code);
    expect(codes).not.toContain('POOR_COVERAGE');
    expect(cli.astrometry?.solved).toBe(true);
    expect(codes).toContain('DISTORTION');
    expect(page.result.report.summary.center.sharedEllipticity).toBe(cli.summary.center.sharedEllipticity);
  }, 240_000);
});
