/** Field map, diagnosis and findings for the report (core/diagnose). */
import type { Analysis } from '../../core/analyze.ts';
import type { Report } from '../../core/report/types.ts';
import { diagnose } from '../../core/diagnose/index.ts';

export function diagnoseExtras(a: Analysis): Pick<Report, 'diagnosis' | 'findings' | 'field'> {
  const d = diagnose(a.stars, { width: a.frame.width, height: a.frame.height, optics: a.optics, displayTopRow: a.frame.displayTopRow });
  return { field: d.field, diagnosis: d.diagnosis, findings: d.findings };
}
