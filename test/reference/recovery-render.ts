/**
 * Renders a scene with core/simulate (photon sampling through the geometric optics model), writes
 * and decodes it as FITS, and runs the real pipeline (core/analyze.ts) on it: what the recovery
 * tests diagnose. Nothing is cached between runs.
 */
import { renderScene, type SimResult } from '../../core/simulate/render.ts';
import type { SceneInput } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { analyzeFrame, type Analysis } from '../../core/analyze.ts';

export const W = 1500;
export const H = 1000;

export interface Rendered {
  analysis: Analysis;
  truth: SimResult['truth'];
}

/** Base scene: 1500 x 1000 px, 500 stars, f/4, Gaussian seeing 2.5 px; overrides merge one level deep. */
export function scene(o: {
  seed?: number; pixelSizeUm?: number; fNumber?: number; seeingPx?: number; stars?: number;
  aberrations?: Record<string, unknown>; trailing?: { lengthPx: number; angleDeg: number }; rotation?: { centerPx: { x: number; y: number } | null; angleRad: number };
}): SceneInput {
  return {
    width: W, height: H, seed: o.seed ?? 1,
    optics: { pixelSizeUm: o.pixelSizeUm ?? 2.4, focalLengthMm: 400, fNumber: o.fNumber ?? 4 },
    stars: { count: o.stars ?? 500, fluxMinE: 5000, fluxMaxE: 300000 },
    psf: {
      kind: 'optics', seeing: { fwhmPx: o.seeingPx ?? 2.5 }, aberrations: o.aberrations ?? {},
      ...(o.trailing ? { trailing: o.trailing } : {}), ...(o.rotation ? { rotation: o.rotation } : {}),
    },
  } as SceneInput;
}

export async function renderAndAnalyze(s: SceneInput): Promise<Rendered> {
  const res = renderScene(s as Parameters<typeof renderScene>[0]);
  const frame = decodeFits(fitsBytes(res));
  const analysis = await analyzeFrame(frame, { workers: 0 });
  return { analysis, truth: res.truth };
}

export function ctxOf(a: Analysis, extra: { wavelengthNm?: number } = {}) {
  return { width: a.frame.width, height: a.frame.height, optics: a.optics, displayTopRow: a.frame.displayTopRow, ...extra };
}
