import { describe, expect, it } from 'vitest';
import { Worker } from 'node:worker_threads';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { KERNELS, startPool } from '../../core/kernels.ts';
import { defineKernel, kernelTable } from '../../core/parallel/kernel.ts';
import { rowBands, sharedFloat32 } from '../../core/parallel/bands.ts';
import { convolveBand, convolveRowsKernel, gaussianTaps } from '../../core/image/convolve.ts';
import type { Frame } from '../../core/frame/types.ts';

/**
 * The worker pool only splits the work: every kernel is the same function on a worker thread
 * as on the calling thread, so the threaded results must equal the calling thread's bit for bit.
 */
describe('rowBands', () => {
  it('splits 0..n into min(parts, n) contiguous bands, at least one', () => {
    for (const n of [0, 1, 5, 17, 1000]) {
      for (const parts of [1, 3, 6, 40]) {
        const b = rowBands(n, parts);
        expect(b.length).toBe(Math.max(1, Math.min(parts, n)));
        expect(b[0][0]).toBe(0);
        expect(b[b.length - 1][1]).toBe(n);
        for (let i = 1; i < b.length; i++) expect(b[i][0]).toBe(b[i - 1][1]);
      }
    }
  });
});

describe('kernel registry', () => {
  it('names every kernel once', () => {
    expect(kernelTable(KERNELS).size).toBe(KERNELS.length);
    const k = defineKernel('twice', () => 0);
    expect(() => kernelTable([k, k])).toThrow(/two kernels named 'twice'/);
  });
});

function simulated(): { frame: Frame; stars: { x: number; y: number }[] } {
  const scene = parseScene({
    width: 640, height: 480, seed: 15,
    stars: { count: 90, fluxMinE: 5000, fluxMaxE: 300000, slope: 1.6, minSeparationPx: 20, marginPx: 10 },
    psf: { kind: 'analytic', model: 'moffat', beta: 3.5, fwhmMajorPx: 3.2, fwhmMinorPx: 2.8, vary: { thetaDeg: [-90, 90] } },
    sky: { level: 400, gradientX: 60 },
    noise: { gain: 1, readNoiseE: 3, biasAdu: 500 },
  });
  const sim = renderScene(scene);
  return { frame: decodeFits(fitsBytes(sim)), stars: sim.truth.stars };
}

/** Arguments of the matched-filter kernel over the whole simulated frame, on shared memory. */
function convolveArgs() {
  const { frame } = simulated();
  const src = sharedFloat32(frame.data.length);
  src.set(frame.data);
  return { src, width: frame.width, height: frame.height, taps: gaussianTaps(1.5), y0: 0, y1: frame.height, out: sharedFloat32(src.length) };
}

describe('worker threads against the calling thread', () => {
  it('analyses a frame to the same stars, sky and detections, bit for bit', async () => {
    const { frame, stars } = simulated();
    // a plain (not shared) copy with holes of missing pixels beside some stars: the pool copies it to shared memory
    const data = Float32Array.from(frame.data);
    for (const s of stars.slice(0, 10)) {
      const x0 = Math.round(s.x) + 3;
      for (let y = Math.max(0, Math.round(s.y) - 4); y < Math.min(frame.height, Math.round(s.y) + 4); y++) {
        data.fill(NaN, y * frame.width + Math.min(x0, frame.width), y * frame.width + Math.min(x0 + 6, frame.width));
      }
    }
    const holed: Frame = { ...frame, data };
    const serial = await analyzeFrame(holed, { workers: 0 });
    const threaded = await analyzeFrame(holed, { workers: 2 });
    expect(serial.stars.length).toBeGreaterThan(50);
    expect(threaded.stars).toEqual(serial.stars);
    expect(threaded.sky).toEqual(serial.sky);
    expect(threaded.detection).toEqual(serial.detection);
  });

  it('reports a kernel missing from the worker, and a kernel that throws, as errors', async () => {
    const unlisted = defineKernel('not-listed', (n: number) => n + 1);
    const pool = await startPool(1);
    try {
      await expect(pool.run(unlisted, 1)).rejects.toThrow(/no kernel 'not-listed' in the worker/);
      await expect(pool.run(convolveRowsKernel, null as never)).rejects.toThrow(/^worker: /);
    } finally {
      await pool.close();
    }
    const here = await startPool(0);
    expect(await here.run(unlisted, 1)).toBe(2);
    await expect(here.run(convolveRowsKernel, null as never)).rejects.toThrow();
  });

  it('rejects tasks still queued when the pool closes', async () => {
    const args = convolveArgs();
    const pool = await startPool(1);
    void pool.run(convolveRowsKernel, args).catch(() => {}); // on the worker when the pool closes
    const queued = expect(pool.run(convolveRowsKernel, args)).rejects.toThrow(/cancelled/);
    await pool.close();
    await queued;
    await expect(pool.run(convolveRowsKernel, args)).rejects.toThrow(/closed/);
  });

  it('serves the kernels from the TypeScript sources through the tsx fallback (boot.mjs)', async () => {
    const args = convolveArgs();
    const want = new Float32Array(args.src.length);
    convolveBand(args.src, args.width, args.height, args.taps, 0, args.height, want);
    const entry = new URL('../../core/pool-worker.ts', import.meta.url).href;
    const w = new Worker(new URL('../../core/parallel/boot.mjs', import.meta.url), { workerData: { entry } });
    try {
      const reply = await new Promise<{ id: number; error?: string }>((resolve, reject) => {
        w.once('message', resolve);
        w.once('error', reject);
        w.postMessage({ id: 7, kind: convolveRowsKernel.kind, args });
      });
      expect(reply).toEqual({ id: 7, result: undefined });
      expect(args.out).toEqual(want);
    } finally {
      await w.terminate();
    }
  });
});
