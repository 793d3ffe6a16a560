/**
 * Compare and spacer sweep for the views: core/series on the stars the host kept, turned into
 * the plain rows the figures draw (core/report/svg/types.ts).
 */
import { compareFrames, sweepFrames, type FrameInput } from '../../core/series/index.ts';
import type { AnalysisResult, CompareResult, SweepResult } from '../preload/bridge.ts';

export interface KeptFrame { result: AnalysisResult; frame: FrameInput }

const ZONES = ['center', 'edges', 'corners'] as const;

export function compareResults(a: KeptFrame, b: KeptFrame): CompareResult {
  const s = compareFrames({ ...a.frame, label: a.result.name }, { ...b.frame, label: b.result.name });
  const cell = (v: (typeof s.zones)['center']['a']) => ({ stars: v.n, fwhm: v.fwhm, fwhmErr: v.fwhmErr, e: v.sharedEllipticity });
  return {
    a: { id: a.result.id, name: a.result.name },
    b: { id: b.result.id, name: b.result.name },
    unit: s.unit,
    zones: ZONES.map((z) => {
      const v = s.zones[z];
      return { zone: z, a: cell(v.a), b: cell(v.b), better: v.better, differencePct: v.differencePct, differenceErrPct: v.differenceErrPct, significance: v.significance, note: v.note };
    }),
    notes: s.notes,
    series: s,
  };
}

/** Polynomial in (s - origin), lowest order first. */
function evalPoly(coef: number[], x: number): number {
  let f = 0;
  for (let k = coef.length - 1; k >= 0; k--) f = f * x + coef[k];
  return f;
}

export function sweepResults(points: (KeptFrame & { spacingMm: number })[]): SweepResult {
  const s = sweepFrames(points.map((p) => ({ ...p.frame, label: p.result.name, spacingMm: p.spacingMm })));
  const bySpacing = new Map(points.map((p) => [p.spacingMm, p.result]));
  // a size minimum is drawn as the corner size excess; otherwise the signed elongation metric
  const useMin = s.evidence === 'minimum';
  const fit = useMin ? s.minimum : s.zeroCrossing;
  const lo = s.points[0].spacingMm;
  const hi = s.points[s.points.length - 1].spacingMm;
  const curve = fit ? Array.from({ length: 41 }, (_, i) => {
    const x = lo + ((hi - lo) * i) / 40;
    return { spacingMm: x, metric: evalPoly(fit.coef, x - fit.origin) };
  }) : [];
  return {
    metric: useMin ? 'corner size excess' : 'corner radial − tangential moment',
    unit: 'px²',
    signed: !useMin,
    points: s.points.map((p) => {
      const r = bySpacing.get(p.spacingMm);
      return {
        id: r?.id ?? '', name: r?.name ?? p.label ?? '', spacingMm: p.spacingMm,
        metric: useMin ? p.cornerExcessPx2 : p.radMinusTanPx2,
        metricErr: useMin ? p.cornerExcessErrPx2 : p.radMinusTanErrPx2,
      };
    }),
    bestSpacingMm: s.bestSpacingMm,
    uncertaintyMm: s.uncertaintyMm,
    evidence: s.evidence,
    curve,
    note: s.note,
    series: s,
  };
}
