/**
 * A rendered all-sky frame through a circular fisheye (issue 13), an invented scenario: a
 * 1500 x 1000 px camera behind an 8 mm f/2.8 fisheye whose image disc has a radius of 0.48 of the
 * frame width (720 px), so the disc is clipped at top and bottom and the four corners are black;
 * vignetting falls to 0.3 at the frame corner (about 0.55 at the disc edge); the lens softens stars
 * off axis by 1.2-1.4x in FWHM at the disc edge (a curved medial image surface, round blur), with
 * no tilt and no other fault. core/simulate renders the stars (photon sampling through the optics
 * model); outside the disc the pixels are set to the bias with read noise only, as a camera shows
 * its black corners.
 */
import { renderScene, type SimResult } from '../../core/simulate/render.ts';
import type { SceneInput } from '../../core/simulate/scene.ts';
import { mulberry32, normal } from '../helpers/rng.ts';

export const FISHEYE = { width: 1500, height: 1000, discRadiusPx: 720, pixelSizeUm: 3.76, fNumber: 2.8, focalLengthMm: 8 };

export interface FisheyeOptions {
  seed?: number;
  stars?: number;
  /** Medial image-surface radius, mm (off-axis softening); default 110 (FWHM about 1.3x at the disc edge). */
  curvatureRadiusMm?: number;
  /** Extra aberrations (to check that a real fault is still found inside the disc). */
  aberrations?: Record<string, unknown>;
}

export function fisheyeScene(o: FisheyeOptions = {}): SceneInput {
  const { width: W, height: H, discRadiusPx: R } = FISHEYE;
  const cx = (W - 1) / 2;
  const cy = (H - 1) / 2;
  const r = mulberry32(o.seed ?? 11);
  const stars: { x: number; y: number; fluxE: number }[] = [];
  const n = o.stars ?? 1200;
  while (stars.length < n) {
    const x = 10 + r() * (W - 20);
    const y = 10 + r() * (H - 20);
    if (Math.hypot(x - cx, y - cy) > R - 6) continue;
    if (stars.some((s) => Math.abs(s.x - x) < 12 && Math.abs(s.y - y) < 12)) continue;
    // many faint stars, a few bright ones: dN/dF ~ F^-1.75 between 3000 and 300000 e
    const a = 1 - 1.75;
    const f = (3000 ** a + r() * (300000 ** a - 3000 ** a)) ** (1 / a);
    stars.push({ x, y, fluxE: f });
  }
  return {
    width: W, height: H, seed: o.seed ?? 11,
    description: 'all-sky frame through a circular fisheye (invented): disc radius 720 px, black corners, vignetting, off-axis softening',
    optics: { pixelSizeUm: FISHEYE.pixelSizeUm, focalLengthMm: FISHEYE.focalLengthMm, fNumber: FISHEYE.fNumber },
    stars,
    psf: {
      kind: 'optics', seeing: { fwhmPx: 2.2 },
      aberrations: { curvatureRadiusMm: o.curvatureRadiusMm ?? 110, ...(o.aberrations ?? {}) },
    },
    sky: { level: 600 },
    vignetting: { cornerIllumination: 0.3, centerPx: null },
    noise: { gain: 1, readNoiseE: 3, biasAdu: 500 },
  } as SceneInput;
}

/** Render, then black out everything beyond the disc (bias plus read noise, no sky, no stars). */
export function renderFisheye(o: FisheyeOptions = {}): SimResult {
  const res = renderScene(fisheyeScene(o) as Parameters<typeof renderScene>[0]);
  const { width: W, height: H, discRadiusPx: R } = FISHEYE;
  const cx = (W - 1) / 2;
  const cy = (H - 1) / 2;
  const rnd = normal(mulberry32((o.seed ?? 11) + 1000));
  for (let y = 0; y < H; y++) {
    for (let x = 0; x < W; x++) {
      if (Math.hypot(x - cx, y - cy) <= R) continue;
      res.data[y * W + x] = Math.round(500 + 3 * rnd());
    }
  }
  return res;
}
