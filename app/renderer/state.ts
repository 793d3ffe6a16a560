/** The page's shared state: the current analysis, the chosen view and what each view remembers. */
import { zoomIdentity, type ZoomBehavior, type ZoomTransform } from 'd3-zoom';
import { DAY, NIGHT, type Theme, type SizeQuantity } from '../../core/report/svg/index.ts';
import type { AnalysisResult, CompareResult, FrameFile, SkyloupeBridge, SweepResult } from '../preload/bridge.ts';

export interface SweepRow { result: AnalysisResult; spacingMm: number | null }

export type FrameSource = { kind: 'file'; file: FrameFile } | { kind: 'demo' };

export const state = {
  bridge: null as unknown as SkyloupeBridge,
  current: null as AnalysisResult | null,
  /** What the current result was made from, to analyse it again with entered optics. */
  source: null as FrameSource | null,
  /** Name of the view shown (a name in the registry, views/index.ts). */
  view: 'sky',
  night: false,
  sizeQuantity: 'fwhmPx' as SizeQuantity,
  shapeMode: 'zones' as 'zones' | 'stars',
  selected: null as number | null,
  /** Star indices in falling SNR, for keyboard stepping. */
  order: [] as number[],
  busy: false,
  zoomT: zoomIdentity as ZoomTransform,
  zoomer: null as ZoomBehavior<SVGSVGElement, unknown> | null,
  compare: { a: null as AnalysisResult | null, b: null as AnalysisResult | null, result: null as CompareResult | null },
  sweep: { rows: [] as SweepRow[], result: null as SweepResult | null },
};

export type PageState = typeof state;

export const theme = (): Theme => (state.night ? NIGHT : DAY);
