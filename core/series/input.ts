/** What the series functions take: one measured frame as plain data. */
import type { Optics } from '../frame/types.ts';
import type { Star } from '../stars/types.ts';
import { usage } from '../errors.ts';

export interface FrameInput {
  readonly stars: readonly Star[];
  readonly width: number;
  readonly height: number;
  readonly optics: Optics;
  readonly displayTopRow?: 'first' | 'last';
  /** How the frame is named in messages (file name, say). */
  readonly label?: string;
}

/** The parts of core/analyze.ts's Analysis the series need (structural, so any Analysis fits). */
export interface AnalysisLike {
  readonly frame: { readonly width: number; readonly height: number; readonly displayTopRow?: 'first' | 'last' };
  readonly optics: Optics;
  readonly stars: readonly Star[];
}

export function fromAnalysis(a: AnalysisLike, label?: string): FrameInput {
  return { stars: a.stars, width: a.frame.width, height: a.frame.height, optics: a.optics, displayTopRow: a.frame.displayTopRow, label };
}

export function checkFrame(f: FrameInput, what: string): void {
  if (!f || !Array.isArray(f.stars)) throw usage(`${what}: no star list`);
  if (!(f.width >= 8 && f.height >= 8)) throw usage(`${what}: frame size ${f.width} x ${f.height} is not usable`);
}
