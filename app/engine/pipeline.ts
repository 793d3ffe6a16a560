/**
 * The desktop program's pipeline, run inside the analysis worker: decode -> analyse ->
 * field map and diagnosis -> report -> pictures. The optics come from the file, the form,
 * or what was remembered for the camera, and the result says which.
 */
import { decodeFrame } from '../../core/frame/read.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { buildReport } from '../../core/report/build.ts';
import type { Report } from '../../core/report/types.ts';
import type { Frame } from '../../core/frame/types.ts';
import { diagnoseExtras } from './diagnosis.ts';
import { chooseStretch } from './stretch.ts';
import { makePreview } from './images.ts';
import type { AnalysisResult, OpticsField, OpticsInput } from '../preload/bridge.ts';
import { fromAnalysis, type FrameInput } from '../../core/series/index.ts';
import { identityOf } from '../../core/series/identity.ts';

export interface PipelineInput {
  name: string;
  bytes: Uint8Array;
  /** Values typed into the optics form for this run. */
  entered?: OpticsInput;
  /** Values remembered per camera key (see cameraKey). */
  remembered: Record<string, OpticsInput>;
  signal?: AbortSignal;
  onProgress?: (stage: string, fraction: number) => void;
  workers?: number;
}

export interface PipelineOutput {
  result: Omit<AnalysisResult, 'id' | 'elapsedMs'>;
  /** The decoded pixels, kept by the host for star stamps. */
  pixels: { data: Float32Array; width: number; height: number; flipY: boolean };
  /** The measured stars as the engine gives them (with moments), kept by the host for compare and sweep. */
  frame: FrameInput;
}

/** The camera name from the file, or the frame size when the file names none. */
export function cameraKey(frame: Pick<Frame, 'hints' | 'meta' | 'width' | 'height'>): string {
  return cameraOf(frame).key;
}

/** The camera key and whether the file named the camera (else the key is the frame size alone). */
export function cameraOf(frame: Pick<Frame, 'hints' | 'meta' | 'width' | 'height'>): { key: string; named: boolean } {
  const named = frame.hints?.camera ?? frame.meta.INSTRUME ?? frame.meta.CAMERA;
  if (typeof named === 'string' && named.trim()) return { key: named.trim().slice(0, 80), named: true };
  return { key: `unnamed camera, ${frame.width} x ${frame.height} px`, named: false };
}

const FIELDS: OpticsField[] = ['focalLengthMm', 'pixelSizeUm', 'fNumber'];

/** Remembered values fill only what the file lacks; entered values win over both. */
export function chooseOptics(frame: Pick<Frame, 'hints'>, entered: OpticsInput | undefined, remembered: OpticsInput | undefined): { user: OpticsInput; from: AnalysisResult['opticsFrom']; given: AnalysisResult['opticsGiven'] } {
  const h = frame.hints;
  const inFile: Record<OpticsField, boolean> = {
    focalLengthMm: !!h?.focalLengthMm,
    pixelSizeUm: !!h?.pixelSizeUm,
    fNumber: !!h?.fNumber || (!!h?.focalLengthMm && !!h?.apertureMm),
  };
  const user: OpticsInput = {};
  const given: AnalysisResult['opticsGiven'] = {};
  let usedRemembered = false;
  for (const k of FIELDS) {
    if (remembered?.[k] !== undefined && !inFile[k]) { user[k] = remembered[k]; given[k] = 'remembered'; usedRemembered = true; }
  }
  if (entered) for (const k of FIELDS) if (entered[k] !== undefined) { user[k] = entered[k]; given[k] = 'typed'; }
  const from = entered && Object.keys(entered).length ? 'entered' : usedRemembered ? 'remembered' : FIELDS.some((k) => inFile[k]) ? 'file' : 'none';
  return { user, from, given };
}

export function missingOptics(report: Report): OpticsField[] {
  return FIELDS.filter((k) => report.frame.optics[k] === null);
}

export async function runPipeline(input: PipelineInput): Promise<PipelineOutput> {
  const progress = input.onProgress ?? (() => {});
  progress('read', 0);
  const frame = await decodeFrame(input.bytes, input.name);
  const { key: camera, named: cameraNamed } = cameraOf(frame);
  const { user, from, given } = chooseOptics(frame, input.entered, input.remembered[camera]);
  // the engine's own 'done' is not the end here: the field map and pictures follow
  const engineProgress = (stage: string, f: number) => { if (stage !== 'done') progress(stage, f); };
  const analysis = await analyzeFrame(frame, { user, signal: input.signal, onProgress: engineProgress, workers: input.workers });
  progress('field', 0);
  const extras = diagnoseExtras(analysis);
  const report = buildReport(analysis, input.name, extras);
  progress('images', 0);
  const flipY = frame.displayTopRow === 'last';
  const img = { data: frame.data, width: frame.width, height: frame.height, flipY, sky: analysis.sky };
  const stretch = chooseStretch(frame.data, analysis.sky);
  const preview = await makePreview(img, stretch);
  progress('done', 1);
  return {
    result: {
      name: input.name, camera, cameraNamed, opticsFrom: from, opticsGiven: given, rememberedOptics: input.remembered[camera] ?? null,
      opticsMissing: missingOptics(report), report, preview,
    },
    pixels: { data: frame.data, width: frame.width, height: frame.height, flipY },
    // the camera and a hash of the pixels let compare and sweep refuse mixed or repeated frames
    frame: fromAnalysis(analysis, input.name, identityOf(frame)),
  };
}
