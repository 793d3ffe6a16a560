import type { Analysis } from '../analyze.ts';
import { diagnose } from '../diagnose/index.ts';
import { buildReport } from './build.ts';
import type { Report } from './types.ts';
import { skyFindings } from '../sky/finding.ts';

/** The full single-frame report: measurement plus field map, diagnosis and findings. */
export function reportFromAnalysis(a: Analysis, path: string): Report {
  const { field, diagnosis, findings } = diagnose(a.stars, {
    width: a.frame.width,
    height: a.frame.height,
    optics: a.optics,
    displayTopRow: a.frame.displayTopRow,
  });
  return buildReport(a, path, { field, diagnosis, findings: [...findings, ...skyFindings(a.astrometry)] });
}
