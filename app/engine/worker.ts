/**
 * The analysis worker thread: runs the pipeline off the thread that serves the page (browser
 * mode) or the window (desktop), reports progress, and stops at the next check on cancel.
 */
import { parentPort } from 'node:worker_threads';
import { SkyloupeError } from '../../core/errors.ts';
import { runPipeline } from './pipeline.ts';
import { runFocusSeries } from './focus-series.ts';
import type { ToWorker, FromWorker } from './protocol.ts';

const port = parentPort;
if (!port) throw new Error('worker.ts must run in a worker thread');

const running = new Map<number, AbortController>();
const post = (m: FromWorker, transfer: ArrayBuffer[] = []) => port.postMessage(m, transfer);

port.on('message', async (msg: ToWorker) => {
  if (msg.type === 'cancel') { running.get(msg.job)?.abort(); return; }
  const { job } = msg;
  const ctl = new AbortController();
  running.set(job, ctl);
  try {
    if (msg.type === 'through-focus') {
      const series = await runFocusSeries({
        frames: msg.frames, stepUnitUm: msg.stepUnitUm, wavelengthNm: msg.wavelengthNm, entered: msg.entered,
        remembered: msg.remembered, workers: msg.workers, signal: ctl.signal,
        onProgress: (fraction) => post({ type: 'progress', job, stage: 'series', fraction }),
      });
      if (ctl.signal.aborted) throw new SkyloupeError('cancelled', 'analysis cancelled');
      post({ type: 'series-result', job, series });
      return;
    }
    const out = await runPipeline({
      name: msg.name,
      bytes: msg.bytes,
      entered: msg.entered,
      remembered: msg.remembered,
      signal: ctl.signal,
      workers: msg.workers,
      onProgress: (stage, fraction) => post({ type: 'progress', job, stage, fraction }),
    });
    if (ctl.signal.aborted) throw new SkyloupeError('cancelled', 'analysis cancelled');
    // the pixels go back to the host for stamps; copy only if they are a view into a larger buffer
    let data = out.pixels.data;
    if (data.byteOffset !== 0 || data.byteLength !== data.buffer.byteLength || !(data.buffer instanceof ArrayBuffer)) data = data.slice();
    post({ type: 'result', job, result: out.result, pixels: { ...out.pixels, data }, frame: out.frame }, [data.buffer as ArrayBuffer]);
  } catch (err) {
    const kind = err instanceof SkyloupeError ? err.kind : 'internal';
    const message = err instanceof Error ? err.message : String(err);
    // a bug, not bad input: keep the stack for whoever reads the program's error output
    if (!(err instanceof SkyloupeError)) process.stderr.write(`skyloupe analysis worker: ${err instanceof Error ? err.stack : message}\n`);
    post({ type: 'error', job, kind, message });
  } finally {
    running.delete(job);
  }
});
