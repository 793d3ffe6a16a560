/** Field map, diagnosis and findings for the report (core/diagnose). */
import type { Analysis } from '../../core/analyze.ts';
import type { Report } from '../../core/report/types.ts';
import { diagnose } from '../../core/diagnose/index.ts';
import { contextOf } from '../../core/diagnose/context.ts';

export function diagnoseExtras(a: Analysis): Pick<Report, 'diagnosis' | 'findings' | 'field'> {
  const d = diagnose(a.stars, contextOf(a));
  return { field: d.field, diagnosis: d.diagnosis, findings: d.findings };
}
