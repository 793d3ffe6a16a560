/**
 * Renders a through-focus series with the engine's simulator (photon sampling through the
 * geometric optics model, spherical aberration included) and measures every frame through the
 * real pipeline (core/analyze.ts) plus the series' pixel extras: what the through-focus recovery
 * tests check against the scene's truth.
 *
 * Signs: a frame at focuser position P (µm, larger = sensor farther from the lens) is rendered
 * with the scene's focus error at the optical centre defocusCenterUm = P - F0, where F0 is the
 * centre's paraxial focus position. The scene's focus error grows with the sensor tilt and the
 * field curvature (positive = sensor behind focus), so a point's best focus position is
 * F0 - (its extra focus error): the through-focus tilt is minus the scene's tiltXUmAcross, which
 * the simulator's truth reports as tilt.acrossFrameUm (the reports' meaning).
 */
import { renderScene } from '../../core/simulate/render.ts';
import type { SceneInput } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { analyzeFrame, type Analysis } from '../../core/analyze.ts';
import { frameExtras, type FrameExtras } from '../../core/series/frame-extras.ts';

export interface SeriesScene {
  seed: number;
  width?: number;
  height?: number;
  stars?: number;
  fNumber?: number;
  pixelSizeUm?: number;
  seeingPx?: number | ((k: number) => number);
  seeingModel?: 'gaussian' | 'moffat';
  /** Centre's paraxial focus position, µm. */
  focusUm: number;
  aberrations?: Record<string, unknown>;
  /** Per frame shift of the star field, px (tracking drift). */
  shiftPx?: (k: number) => { x: number; y: number };
}

export interface RenderedFrame {
  positionUm: number;
  analysis: Analysis;
  extras: FrameExtras;
  truth: ReturnType<typeof renderScene>['truth'];
}

export function frameScene(s: SeriesScene, positionUm: number, k: number): SceneInput {
  const W = s.width ?? 1500, H = s.height ?? 1000;
  const seeing = typeof s.seeingPx === 'function' ? s.seeingPx(k) : s.seeingPx ?? 2.5;
  return {
    width: W, height: H, seed: s.seed * 100 + k,
    optics: { pixelSizeUm: s.pixelSizeUm ?? 2.4, focalLengthMm: 400, fNumber: s.fNumber ?? 4 },
    stars: { count: s.stars ?? 500, fluxMinE: 8000, fluxMaxE: 300000 },
    psf: {
      kind: 'optics', seeing: { fwhmPx: seeing, model: s.seeingModel ?? 'gaussian' },
      aberrations: { ...(s.aberrations ?? {}), defocusCenterUm: positionUm - s.focusUm },
    },
  } as SceneInput;
}

/**
 * The same random star field in every frame: the scene's stars are drawn once (seed of frame 0)
 * and passed explicitly, shifted per frame.
 */
export async function renderSeries(s: SeriesScene, positions: readonly number[]): Promise<RenderedFrame[]> {
  const first = renderScene(frameScene(s, positions[0], 0) as Parameters<typeof renderScene>[0]);
  const field = first.truth.stars.map((t) => ({ x: t.xNominal, y: t.yNominal, fluxE: t.fluxE / (t.vignetting || 1) }));
  const out: RenderedFrame[] = [];
  for (const [k, P] of positions.entries()) {
    const sh = s.shiftPx ? s.shiftPx(k) : { x: 0, y: 0 };
    const sc = frameScene(s, P, k) as Record<string, unknown>;
    sc.stars = field.map((f) => ({ x: f.x + sh.x, y: f.y + sh.y, fluxE: f.fluxE }));
    const res = renderScene(sc as unknown as Parameters<typeof renderScene>[0]);
    const frame = decodeFits(fitsBytes(res));
    const analysis = await analyzeFrame(frame, { workers: 0 });
    out.push({ positionUm: P, analysis, extras: frameExtras(frame, analysis), truth: res.truth });
  }
  return out;
}

/** The scene's truth in through-focus terms (see the header for the signs). */
export function seriesTruth(s: SeriesScene, rendered: RenderedFrame) {
  const g = rendered.truth.global as Record<string, any>;
  const W = s.width ?? 1500, H = s.height ?? 1000;
  const pMm = (s.pixelSizeUm ?? 2.4) / 1000;
  const hCornerMm = 0.5 * Math.hypot(W, H) * pMm;
  return {
    acrossX: g.tilt.acrossFrameUm.x as number,
    acrossY: g.tilt.acrossFrameUm.y as number,
    cornerUm: -(g.curvature.umPerMm2 as number) * hCornerMm * hCornerMm,
    separationUm: (g.astigmatism.umPerMm2 as number) * hCornerMm * hCornerMm,
    sphericalUm: g.spherical.longitudinalUm as number,
  };
}
