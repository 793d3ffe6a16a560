/**
 * A focus series in the analysis worker: the same steps as `skyloupe through-focus` (core/cli/
 * through-focus.ts): each frame analysed without the plate-solving step through one pool, its
 * extras taken from its pixels right after (core/series/frame-extras.ts), then runThroughFocus.
 * Positions not typed come from the header (core/series/focus-position.ts).
 */
import { decodeFrame } from '../../core/frame/read.ts';
import { analyzeFrame, type Analysis } from '../../core/analyze.ts';
import { startPool } from '../../core/kernels.ts';
import { SkyloupeError, usage } from '../../core/errors.ts';
import { frameExtras, type FrameExtras } from '../../core/series/frame-extras.ts';
import { runThroughFocus, type ThroughFocusResult } from '../../core/series/through-focus.ts';
import { headerFocusPosition, FOCUS_POSITION_KEYS } from '../../core/series/focus-position.ts';
import { cameraKey, chooseOptics } from './pipeline.ts';
import type { OpticsInput } from '../preload/bridge.ts';

export interface FocusSeriesInput {
  frames: { name: string; bytes: Uint8Array; position: number | null }[];
  stepUnitUm: number | null;
  wavelengthNm?: number;
  entered?: OpticsInput;
  remembered: Record<string, OpticsInput>;
  workers?: number;
  signal?: AbortSignal;
  /** Overall fraction of the series done, 0..1. */
  onProgress?: (fraction: number) => void;
}

export interface FocusSeriesOutput {
  result: ThroughFocusResult;
  positions: { name: string; given: number; from: string }[];
}

/**
 * The core's messages name the command line (`--at UM=FRAME`, `focus-pair NEAR FAR --step UM`)
 * and write "um"; the page has its own controls and writes µm.
 */
export function pageWords(message: string): string {
  return message
    .replace(/^through-focus:\s*/, '')
    .replace(/use focus-pair NEAR FAR --step UM/g, 'use the focus pair')
    .replace(/\s*\(--at UM=FRAME\)/g, '')
    .replace(/(\d)\s*um\b/g, '$1 µm')
    .replace(/\bum\b/g, 'µm');
}

export async function runFocusSeries(input: FocusSeriesInput): Promise<FocusSeriesOutput> {
  const n = input.frames.length;
  const progress = input.onProgress ?? (() => {});
  const analyses: Analysis[] = [];
  const extras: FrameExtras[] = [];
  const positions: FocusSeriesOutput['positions'] = [];
  const pool = await startPool(input.workers);
  try {
    for (const [k, f] of input.frames.entries()) {
      if (input.signal?.aborted) throw new SkyloupeError('cancelled', 'analysis cancelled');
      progress(k / n);
      let frame;
      try {
        frame = await decodeFrame(f.bytes, f.name);
      } catch (err) {
        if (err instanceof SkyloupeError) throw new SkyloupeError(err.kind, `${f.name}: ${err.message}`);
        throw err;
      }
      let given = f.position;
      let from = 'typed';
      if (given === null) {
        const h = headerFocusPosition(frame.meta);
        if (!h) throw usage(`${f.name}: no focuser position typed and none in its header (${FOCUS_POSITION_KEYS.join(' or ')}): type its position`);
        given = h.value;
        from = h.keyword;
      }
      positions.push({ name: f.name, given, from });
      // the first frame's camera decides the remembered optics for the whole series
      const { user } = chooseOptics(frame, input.entered, input.remembered[cameraKey(frame)]);
      try {
        const a = await analyzeFrame(frame, {
          user, pool, solve: false, signal: input.signal,
          onProgress: (stage, fr) => { if (stage === 'measure') progress((k + Math.max(0, Math.min(1, fr))) / n); },
        });
        analyses.push(a);
        extras.push(frameExtras(frame, a));
      } catch (err) {
        if (err instanceof SkyloupeError && err.kind !== 'cancelled') throw new SkyloupeError(err.kind, `${f.name}: ${err.message}`);
        throw err;
      }
    }
  } finally {
    void pool.close();
  }
  progress(1);
  const step = input.stepUnitUm ?? null;
  try {
    const result = runThroughFocus(positions.map((p, k) => ({
      positionUm: p.given * (step ?? 1), analysis: analyses[k], label: p.name, profiles: extras[k].profiles, stamps: extras[k].stamps,
    })), { wavelengthNm: input.wavelengthNm, stepUnitUm: step, positionsGiven: step ? positions.map((p) => p.given) : null });
    return { result, positions };
  } catch (err) {
    if (err instanceof SkyloupeError) throw new SkyloupeError(err.kind, pageWords(err.message));
    throw err;
  }
}
