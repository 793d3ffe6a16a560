/** Messages between the host (session.ts) and the analysis worker (worker.ts). */
import type { SkyloupeErrorKind } from '../../core/errors.ts';
import type { OpticsInput } from '../preload/bridge.ts';
import type { PipelineOutput } from './pipeline.ts';

export type ToWorker =
  | { type: 'analyze'; job: number; name: string; bytes: Uint8Array; entered?: OpticsInput; remembered: Record<string, OpticsInput>; workers?: number }
  | { type: 'cancel'; job: number };

export type FromWorker =
  | { type: 'progress'; job: number; stage: string; fraction: number }
  | { type: 'result'; job: number; result: PipelineOutput['result']; pixels: PipelineOutput['pixels']; frame: PipelineOutput['frame'] }
  | { type: 'error'; job: number; kind: SkyloupeErrorKind; message: string };
