import { parentPort } from 'node:worker_threads';
import { measureBatch } from './measure-batch.ts';
import type { StampBatch } from './stamps.ts';

// One message in, one message out: a packed batch of stamps, its measured stars.
parentPort?.on('message', (msg: { id: number; batch: StampBatch; model: 'auto' | 'gaussian' | 'moffat' }) => {
  try {
    const stars = measureBatch(msg.batch, msg.model);
    parentPort!.postMessage({ id: msg.id, stars });
  } catch (err) {
    parentPort!.postMessage({ id: msg.id, error: err instanceof Error ? err.message : String(err) });
  }
});
