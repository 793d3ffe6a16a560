/** What the series functions take: one measured frame as plain data, and the checks that frames of one series belong together. */
import type { Optics } from '../frame/types.ts';
import type { Star } from '../stars/types.ts';
import { usage } from '../errors.ts';
import { fmt } from '../diagnose/words.ts';

export interface FrameInput {
  readonly stars: readonly Star[];
  readonly width: number;
  readonly height: number;
  readonly optics: Optics;
  readonly displayTopRow?: 'first' | 'last';
  /** How the frame is named in messages (file name, say). */
  readonly label?: string;
  /** The camera the file names (header INSTRUME / CAMERA, EXIF model); null or absent when it names none. */
  readonly camera?: string | null;
  /** A hash of the decoded pixels (pixelsHash()), so the same frame given twice is caught; absent when the pixels were not at hand. */
  readonly pixelsHash?: string | null;
}

/** The parts of core/analyze.ts's Analysis the series need (structural, so any Analysis fits). */
export interface AnalysisLike {
  readonly frame: { readonly width: number; readonly height: number; readonly displayTopRow?: 'first' | 'last' };
  readonly optics: Optics;
  readonly stars: readonly Star[];
}

/** What a decoded frame says about where it came from: its camera and a hash of its pixels (identity.ts). */
export interface FrameIdentity { camera: string | null; pixelsHash: string | null }

export function fromAnalysis(a: AnalysisLike, label?: string, id?: FrameIdentity | null): FrameInput {
  return {
    stars: a.stars, width: a.frame.width, height: a.frame.height, optics: a.optics, displayTopRow: a.frame.displayTopRow, label,
    camera: id?.camera ?? null, pixelsHash: id?.pixelsHash ?? null,
  };
}

export function checkFrame(f: FrameInput, what: string): void {
  if (!f || !Array.isArray(f.stars)) throw usage(`${what}: no star list`);
  if (!(f.width >= 8 && f.height >= 8)) throw usage(`${what}: frame size ${f.width} x ${f.height} is not usable`);
}

export interface SetupCheck {
  /** Refuse plate scales that differ by more than this fraction (null: only warn). Default 0.02. */
  scaleTolerance?: number | null;
  /** Refuse frames whose plate scales differ by more than this factor even when only warning (compare). */
  scaleRatioLimit?: number;
}

/**
 * Frames of one series must come from one camera and setting: the same size, the same camera
 * (when the files name one), the same plate scale (when known), and no picture twice (the same
 * pixel hash; frames without a hash are not compared). Refuses with a usage error; returns warnings.
 */
export function checkSameSetup(command: string, frames: readonly FrameInput[], names?: readonly string[], opts: SetupCheck = {}): string[] {
  const warnings: string[] = [];
  const name = (i: number) => frames[i].label ?? names?.[i] ?? `frame ${i + 1}`;
  const tol = opts.scaleTolerance === undefined ? 0.02 : opts.scaleTolerance;
  const limit = opts.scaleRatioLimit ?? 2;
  for (let i = 1; i < frames.length; i++) {
    const a = frames[0], b = frames[i];
    if (a.width !== b.width || a.height !== b.height) {
      throw usage(`${command}: the frames differ in size (${name(0)} is ${a.width} x ${a.height} px, ${name(i)} is ${b.width} x ${b.height} px): the frames must come from one camera at one setting (same binning and crop)`);
    }
  }
  for (let i = 0; i < frames.length; i++) {
    for (let j = 0; j < i; j++) {
      const a = frames[j], b = frames[i];
      if (a.camera && b.camera && a.camera !== b.camera) {
        throw usage(`${command}: the frames come from different cameras (${name(j)}: "${a.camera}", ${name(i)}: "${b.camera}"); take every frame with one camera`);
      }
      if (a.pixelsHash && b.pixelsHash && a.pixelsHash === b.pixelsHash) throw usage(`${command}: ${name(j)} and ${name(i)} are the same picture (identical pixels): give each frame once, each taken at its own setting`);
    }
  }
  const scales = frames.map((f) => f.optics.plateScaleArcsecPerPx);
  const known = scales.map((s, i) => ({ s, i })).filter((v): v is { s: number; i: number } => typeof v.s === 'number' && v.s > 0);
  if (known.length >= 2) {
    const lo = known.reduce((m, v) => (v.s < m.s ? v : m)), hi = known.reduce((m, v) => (v.s > m.s ? v : m));
    const ratio = hi.s / lo.s;
    const words = `${name(lo.i)} ${fmt(lo.s, 3)} arcsec/px, ${name(hi.i)} ${fmt(hi.s, 3)} arcsec/px`;
    if (tol !== null && ratio - 1 > tol) {
      throw usage(`${command}: the plate scales differ by ${fmt(100 * (ratio - 1), 1)} % (${words}): the frames must share one camera and focal length; check the focal length and pixel size given for each`);
    }
    if (ratio > limit) {
      throw usage(`${command}: the plate scales differ ${fmt(ratio, 1)} times (${words}): star sizes would mostly measure the focal lengths, not the optics; compare frames of like focal lengths`);
    }
    if (ratio - 1 > 0.02) warnings.push(`plate scales differ (${words}): sizes are compared in arcseconds`);
  }
  return warnings;
}
