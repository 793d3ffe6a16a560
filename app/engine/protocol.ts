/** Messages between the host (session.ts) and the analysis worker (worker.ts). */
import type { SkyloupeErrorKind } from '../../core/errors.ts';
import type { OpticsInput } from '../preload/bridge.ts';
import type { PipelineOutput } from './pipeline.ts';
import type { FocusSeriesOutput } from './focus-series.ts';

export type ToWorker =
  | { type: 'analyze'; job: number; name: string; bytes: Uint8Array; entered?: OpticsInput; remembered: Record<string, OpticsInput>; workers?: number }
  | {
    type: 'through-focus'; job: number; frames: { name: string; bytes: Uint8Array; position: number | null }[];
    stepUnitUm: number | null; wavelengthNm?: number; entered?: OpticsInput; remembered: Record<string, OpticsInput>; workers?: number;
  }
  | { type: 'cancel'; job: number };

export type FromWorker =
  | { type: 'progress'; job: number; stage: string; fraction: number }
  | { type: 'result'; job: number; result: PipelineOutput['result']; pixels: PipelineOutput['pixels']; frame: PipelineOutput['frame'] }
  | { type: 'series-result'; job: number; series: FocusSeriesOutput }
  | { type: 'error'; job: number; kind: SkyloupeErrorKind; message: string };
