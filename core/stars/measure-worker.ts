import { parentPort } from 'node:worker_threads';
import { measureBatch } from './measure-batch.ts';
import type { StampBatch } from './stamps.ts';
import { convolveBand } from '../image/convolve.ts';
import { localMaximaRows } from './detect.ts';
import { meshRowStats, subtractSkyRows, type MeshGeometry, type SkyModel } from '../image/background.ts';

/**
 * Worker entry for the pipeline's parallel steps: sky boxes, sky subtraction and the
 * matched filter over bands of rows in shared memory, and the per-star fits.
 * One message in, one message out.
 */
export type WorkerTask =
  | { kind: 'measure'; batch: StampBatch; model: 'auto' | 'gaussian' | 'moffat' }
  | { kind: 'sky-rows'; data: Float32Array; width: number; height: number; geometry: MeshGeometry; my0: number; my1: number }
  | { kind: 'subtract'; data: Float32Array; sky: SkyModel; y0: number; y1: number; out: Float32Array; missing: Uint8Array }
  | { kind: 'convolve'; src: Float32Array; width: number; height: number; taps: Float32Array; y0: number; y1: number; out: Float32Array }
  | { kind: 'maxima'; f: Float32Array; width: number; height: number; sky: SkyModel; nf: number; threshold: number; y0: number; y1: number };

export function runTask(t: WorkerTask): unknown {
  switch (t.kind) {
    case 'measure': return measureBatch(t.batch, t.model);
    case 'sky-rows': return meshRowStats(t.data, t.width, t.height, t.geometry, t.my0, t.my1);
    case 'subtract': return subtractSkyRows(t.data, t.sky, t.y0, t.y1, t.out, t.missing) !== null;
    case 'convolve': convolveBand(t.src, t.width, t.height, t.taps, t.y0, t.y1, t.out); return null;
    case 'maxima': return localMaximaRows(t.f, t.width, t.height, t.sky, t.nf, t.threshold, t.y0, t.y1);
  }
}

parentPort?.on('message', (msg: { id: number; task: WorkerTask }) => {
  try {
    parentPort!.postMessage({ id: msg.id, result: runTask(msg.task) });
  } catch (err) {
    parentPort!.postMessage({ id: msg.id, error: err instanceof Error ? err.message : String(err) });
  }
});
