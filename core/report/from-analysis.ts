import type { Analysis } from '../analyze.ts';
import { diagnose } from '../diagnose/index.ts';
import { contextOf } from '../diagnose/context.ts';
import { buildReport } from './build.ts';
import type { Report } from './types.ts';
import { skyFindings } from '../sky/finding.ts';

/** The full single-frame report: measurement plus field map, diagnosis and findings. */
export function reportFromAnalysis(a: Analysis, path: string): Report {
  const { field, diagnosis, findings } = diagnose(a.stars, contextOf(a));
  return buildReport(a, path, { field, diagnosis, findings: [...findings, ...skyFindings(a.astrometry)] });
}
