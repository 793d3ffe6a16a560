/**
 * Field map, diagnosis and findings for the report (core/diagnose), with the plate solution's
 * findings (distortion, focal length) as the command line's report has them
 * (core/report/from-analysis.ts).
 */
import type { Analysis } from '../../core/analyze.ts';
import type { Report } from '../../core/report/types.ts';
import { diagnose } from '../../core/diagnose/index.ts';
import { contextOf } from '../../core/diagnose/context.ts';
import { skyFindings } from '../../core/sky/finding.ts';

export function diagnoseExtras(a: Analysis): Pick<Report, 'diagnosis' | 'findings' | 'field'> {
  const d = diagnose(a.stars, contextOf(a));
  // the plate solution's findings too (distortion, a focal length other than stated), as in reportFromAnalysis
  return { field: d.field, diagnosis: d.diagnosis, findings: [...d.findings, ...skyFindings(a.astrometry)] };
}
