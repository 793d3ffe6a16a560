/**
 * The host side of the bridge, shared by the desktop main process and browser mode: one
 * analysis worker, a queue of jobs, progress, cancel, and the results kept for stamps,
 * comparisons, sweeps and exports. Arguments are validated by the caller (validate.ts).
 */
import { Worker } from 'node:worker_threads';
import { readFile } from 'node:fs/promises';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { randomBytes } from 'node:crypto';
import { SkyloupeError } from '../../core/errors.ts';
import { starsCsv } from '../../core/report/csv.ts';
import { reportHtml } from '../../core/report/html.ts';
import type {
  AnalysisResult, CompareResult, ExportKind, FailureKind, FocusSeriesResult, OpticsInput, Outcome, Progress, StampData, SweepResult,
} from '../preload/bridge.ts';
import type { FocusSeriesOutput } from './focus-series.ts';
import type { FocusSeriesJob } from './validate.ts';
import type { FromWorker, ToWorker } from './protocol.ts';
import type { PipelineOutput } from './pipeline.ts';
import type { CameraMemory } from './memory.ts';
import { compareResults, sweepResults, type KeptFrame } from './series.ts';
import { focusPair, type FocusPairResult } from '../../core/series/focus-pair.ts';

export interface SessionOptions {
  /** The worker entry: worker-boot.mjs from sources, or a bundled worker. */
  workerUrl: URL;
  /** The built-in demo frame; null when there is none. */
  demoPath: string | null;
  memory: CameraMemory;
  /** Threads for the per-star fits inside the worker (default: the engine's choice). */
  measureWorkers?: number;
  /** How many frames' pixels are kept for stamps (each is 4 bytes per pixel). */
  keepPixels?: number;
  keepResults?: number;
}

export interface ExportFile { filename: string; mime: string; body: string }

/** Share of the whole job that each stage starts at and spans (a rough guide for the bar). */
const STAGES: Record<string, [number, number]> = {
  read: [0, 0.05], background: [0.05, 0.1], detect: [0.15, 0.1], measure: [0.25, 0.55],
  field: [0.8, 0.1], images: [0.9, 0.09], done: [1, 0],
  // a focus series reports its own overall fraction (frames analysed so far)
  series: [0, 1],
};

/** A cancelled job that has not stopped by itself within this time has its worker ended. */
const HARD_CANCEL_MS = 400;

type Answer = Extract<FromWorker, { type: 'result' | 'series-result' }>;

interface Job {
  job: number;
  resolve: (o: Answer) => void;
  reject: (e: unknown) => void;
  timer?: ReturnType<typeof setTimeout>;
}

export function fail<T>(kind: FailureKind, message: string): Outcome<T> {
  return { ok: false, kind, message };
}

export function toOutcome<T>(err: unknown): Outcome<T> {
  if (err instanceof SkyloupeError) return fail(err.kind, err.message);
  return fail('internal', `internal error: ${err instanceof Error ? err.message : String(err)}`);
}

export class EngineSession {
  private worker: Worker | null = null;
  private current: Job | null = null;
  private queue: Promise<unknown> = Promise.resolve();
  private nextJob = 1;
  /** Jobs with a number at or below this were cancelled before they started. */
  private cancelledUpTo = 0;
  private readonly listeners = new Set<(p: Progress) => void>();
  private readonly results = new Map<string, AnalysisResult>();
  private readonly pixels = new Map<string, PipelineOutput['pixels']>();
  private readonly frames = new Map<string, PipelineOutput['frame']>();

  constructor(private readonly opts: SessionOptions) {}

  onProgress(cb: (p: Progress) => void): () => void {
    this.listeners.add(cb);
    return () => this.listeners.delete(cb);
  }

  get demoAvailable(): boolean {
    return !!this.opts.demoPath && existsSync(this.opts.demoPath);
  }

  async analyzeDemo(entered?: OpticsInput, onProgress?: (p: Progress) => void): Promise<Outcome<AnalysisResult>> {
    if (!this.opts.demoPath || !this.demoAvailable) return fail('not-found', 'the demo frame is not installed (sample-data/demo-frame.fits)');
    // the job is numbered before the file is read, so a cancel during the read reaches it
    const job = this.nextJob++;
    const bytes = await readFile(this.opts.demoPath);
    return this.analyzeNumbered(job, { name: path.basename(this.opts.demoPath), bytes }, entered, onProgress);
  }

  /**
   * Queue one analysis; jobs run one at a time in the worker. `onProgress` hears this job only
   * (listeners added with onProgress() hear every job).
   */
  analyze(file: { name: string; bytes: Uint8Array }, entered?: OpticsInput, onProgress?: (p: Progress) => void): Promise<Outcome<AnalysisResult>> {
    return this.analyzeNumbered(this.nextJob++, file, entered, onProgress);
  }

  private analyzeNumbered(job: number, file: { name: string; bytes: Uint8Array }, entered?: OpticsInput, onProgress?: (p: Progress) => void): Promise<Outcome<AnalysisResult>> {
    if (onProgress) {
      const off = this.onProgress((p) => { if (p.job === job) onProgress(p); });
      const p = this.analyzeJob(job, file, entered);
      void p.finally(off);
      return p;
    }
    return this.analyzeJob(job, file, entered);
  }

  /** Jobs run one at a time, in the order asked. */
  private enqueue<T>(run: () => Promise<Outcome<T>>): Promise<Outcome<T>> {
    const p = this.queue.then(run, run);
    this.queue = p;
    return p;
  }

  /**
   * A focus series: every frame analysed in the worker (no plate solving), then the series fitted
   * there, as `skyloupe through-focus` does. Arguments checked by validate.focusSeries.
   */
  throughFocus(req: FocusSeriesJob, onProgress?: (p: Progress) => void): Promise<Outcome<FocusSeriesResult>> {
    const job = this.nextJob++;
    const off = onProgress ? this.onProgress((p) => { if (p.job === job) onProgress(p); }) : () => {};
    const p = this.enqueue(async (): Promise<Outcome<FocusSeriesResult>> => {
      if (job <= this.cancelledUpTo) return fail('cancelled', 'analysis cancelled');
      const t0 = performance.now();
      try {
        // copies, so the caller's buffers stay usable; the copies move to the worker
        const frames = req.frames.map((f) => ({ name: f.name, bytes: new Uint8Array(f.bytes), position: f.position }));
        const msg: ToWorker = {
          type: 'through-focus', job, frames, stepUnitUm: req.stepUnitUm, wavelengthNm: req.wavelengthNm,
          entered: req.optics, remembered: this.opts.memory.all(), workers: this.opts.measureWorkers,
        };
        this.emit(job, 'series', 0);
        const m = await this.runJob(job, msg, frames.map((f) => f.bytes.buffer as ArrayBuffer));
        if (m.type !== 'series-result') throw new Error('the worker answered a focus series with a frame');
        const out: FocusSeriesOutput = m.series;
        this.emit(job, 'done', 1);
        return { ok: true, value: { result: out.result, positions: out.positions, elapsedMs: Math.round(performance.now() - t0) } };
      } catch (err) {
        return toOutcome(err);
      }
    });
    void p.finally(off);
    return p;
  }

  private analyzeJob(job: number, file: { name: string; bytes: Uint8Array }, entered?: OpticsInput): Promise<Outcome<AnalysisResult>> {
    const run = async (): Promise<Outcome<AnalysisResult>> => {
      if (job <= this.cancelledUpTo) return fail('cancelled', 'analysis cancelled');
      const t0 = performance.now();
      try {
        this.emit(job, 'read', 0);
        // a copy, so the caller's buffer stays usable; the copy moves to the worker without another one
        const bytes = new Uint8Array(file.bytes);
        const msg: ToWorker = {
          type: 'analyze', job, name: file.name, bytes, entered,
          remembered: this.opts.memory.all(), workers: this.opts.measureWorkers,
        };
        const m = await this.runJob(job, msg, [bytes.buffer as ArrayBuffer]);
        if (m.type !== 'result') throw new Error('the worker answered a frame with a focus series');
        const out: PipelineOutput = { result: m.result, pixels: m.pixels, frame: m.frame };
        const id = randomBytes(6).toString('hex');
        const result: AnalysisResult = { ...out.result, id, elapsedMs: Math.round(performance.now() - t0) };
        // entered optics are remembered once the worker has named the camera; a memory that
        // cannot be written costs the next frame some typing, not this result
        if (entered) await this.opts.memory.remember(result.camera, entered).catch(() => undefined);
        result.rememberedOptics = this.opts.memory.get(result.camera);
        this.keep(id, result, out);
        return { ok: true, value: result };
      } catch (err) {
        return toOutcome(err);
      }
    };
    return this.enqueue(run);
  }

  /** Cancel the running job and everything queued behind it. */
  cancel(): void {
    this.cancelledUpTo = this.nextJob - 1;
    const cur = this.current;
    if (!cur || !this.worker) return;
    this.worker.postMessage({ type: 'cancel', job: cur.job } satisfies ToWorker);
    cur.timer ??= setTimeout(() => {
      if (this.current !== cur) return;
      this.dropWorker();
      cur.reject(new SkyloupeError('cancelled', 'analysis cancelled'));
    }, HARD_CANCEL_MS);
  }

  private kept(id: string): KeptFrame | null {
    const result = this.results.get(id);
    const frame = this.frames.get(id);
    return result && frame ? { result, frame } : null;
  }

  stamp(id: string, index: number): Outcome<StampData> {
    const r = this.results.get(id);
    if (!r) return fail('not-found', 'that analysis is no longer kept: open the frame again');
    const star = r.report.stars[index];
    if (!star) return fail('not-found', `no star number ${index}`);
    const px = this.pixels.get(id);
    if (!px) return fail('not-found', 'the pixels of that frame are no longer kept: open the frame again');
    // a box of about three FWHM each side, 11 to 41 px across
    const half = Math.min(20, Math.max(5, Math.round(3 * (Number.isFinite(star.fwhmPx) ? star.fwhmPx : 3))));
    const cx = Math.round(star.x);
    const cy = Math.round(star.y);
    const x0 = Math.max(0, cx - half);
    const y0 = Math.max(0, cy - half);
    const x1 = Math.min(px.width - 1, cx + half);
    const y1 = Math.min(px.height - 1, cy + half);
    const values: (number | null)[] = [];
    for (let y = y0; y <= y1; y++) {
      for (let x = x0; x <= x1; x++) {
        const v = px.data[y * px.width + x];
        values.push(Number.isFinite(v) ? v : null);
      }
    }
    return { ok: true, value: { index, x0, y0, w: x1 - x0 + 1, h: y1 - y0 + 1, values, flipY: px.flipY, star } };
  }

  compare(idA: string, idB: string): Outcome<CompareResult> {
    const a = this.kept(idA);
    const b = this.kept(idB);
    if (!a || !b) return fail('not-found', 'open both frames again: one of them is no longer kept');
    try {
      return { ok: true, value: compareResults(a, b) };
    } catch (err) {
      return toOutcome(err);
    }
  }

  sweep(points: { id: string; spacingMm: number }[]): Outcome<SweepResult> {
    const rs = points.map((p) => ({ spacingMm: p.spacingMm, kept: this.kept(p.id) }));
    if (rs.some((p) => !p.kept)) return fail('not-found', 'open the sweep frames again: some are no longer kept');
    try {
      return { ok: true, value: sweepResults(rs.map((p) => ({ spacingMm: p.spacingMm, ...p.kept! }))) };
    } catch (err) {
      return toOutcome(err);
    }
  }

  async forgetOptics(camera: string): Promise<Outcome<null>> {
    try {
      await this.opts.memory.forget(camera);
      return { ok: true, value: null };
    } catch (err) {
      return fail('internal', `the remembered optics could not be saved (${err instanceof Error ? err.message : String(err)})`);
    }
  }

  focusPair(firstId: string, secondId: string, stepUm: number): Outcome<FocusPairResult> {
    if (firstId === secondId) return fail('usage', 'a focus pair needs two different frames: the same frame is in both places');
    const a = this.kept(firstId);
    const b = this.kept(secondId);
    if (!a || !b) return fail('not-found', 'open both frames again: one of them is no longer kept');
    try {
      return { ok: true, value: focusPair({ ...a.frame, label: a.result.name }, { ...b.frame, label: b.result.name }, stepUm) };
    } catch (err) {
      return toOutcome(err);
    }
  }

  exportFile(id: string, kind: ExportKind): Outcome<ExportFile> {
    const r = this.results.get(id);
    if (!r) return fail('not-found', 'that analysis is no longer kept: open the frame again');
    const stem = r.name.replace(/\.[^.]*$/, '') || 'frame';
    switch (kind) {
      case 'json': return { ok: true, value: { filename: `${stem}.skyloupe.json`, mime: 'application/json', body: JSON.stringify(r.report, null, 2) + '\n' } };
      case 'csv': return { ok: true, value: { filename: `${stem}.stars.csv`, mime: 'text/csv', body: starsCsv(r.report) } };
      case 'html': return {
        ok: true,
        value: { filename: `${stem}.skyloupe.html`, mime: 'text/html', body: reportHtml(r.report, { name: r.name, preview: r.preview }) },
      };
    }
  }

  async close(): Promise<void> {
    this.cancel();
    this.dropWorker();
  }

  private keep(id: string, r: AnalysisResult, out: PipelineOutput): void {
    this.results.set(id, r);
    this.pixels.set(id, out.pixels);
    this.frames.set(id, out.frame);
    const trim = <V>(m: Map<string, V>, max: number) => {
      while (m.size > max) m.delete(m.keys().next().value as string);
    };
    trim(this.results, this.opts.keepResults ?? 40);
    trim(this.frames, this.opts.keepResults ?? 40);
    trim(this.pixels, this.opts.keepPixels ?? 3);
  }

  private emit(job: number, stage: string, fraction: number): void {
    const [start, span] = STAGES[stage] ?? [0, 0];
    const p: Progress = { job, stage, fraction, overall: Math.min(1, start + span * Math.max(0, Math.min(1, fraction))) };
    for (const cb of this.listeners) cb(p);
  }

  private ensureWorker(): Worker {
    if (this.worker) return this.worker;
    const w = new Worker(this.opts.workerUrl);
    w.on('message', (m: FromWorker) => {
      const cur = this.current;
      if (!cur || m.job !== cur.job) return;
      if (m.type === 'progress') this.emit(m.job, m.stage, m.fraction);
      else if (m.type === 'result' || m.type === 'series-result') cur.resolve(m);
      else cur.reject(new SkyloupeError(m.kind, m.message));
    });
    const died = (err: unknown) => {
      if (this.worker !== w) return;
      this.worker = null;
      this.current?.reject(err instanceof Error ? err : new Error(`analysis worker stopped (${String(err)})`));
    };
    w.on('error', died);
    w.on('exit', (code) => died(new Error(`analysis worker stopped (exit ${code})`)));
    this.worker = w;
    return w;
  }

  private dropWorker(): void {
    const w = this.worker;
    this.worker = null;
    if (w) void w.terminate();
  }

  private runJob(job: number, msg: ToWorker, transfer: ArrayBuffer[]): Promise<Answer> {
    return new Promise<Answer>((resolve, reject) => {
      const done = () => { if (this.current?.timer) clearTimeout(this.current.timer); this.current = null; };
      this.current = { job, resolve: (o) => { done(); resolve(o); }, reject: (e) => { done(); reject(e); } };
      this.ensureWorker().postMessage(msg, transfer);
    });
  }
}
