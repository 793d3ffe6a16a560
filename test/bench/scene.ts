// The benches' star field, one definition for all of them: Moffat stars of varying size and
// shape at one density, a sky gradient, hot pixels (invented scene, rendered by core/simulate).
import { parseScene, type Scene } from '../../core/simulate/scene.ts';

export function benchScene(width: number, height: number, stars: number, hotPixels: number, seed = 20261201): Scene {
  return parseScene({
    width, height, seed,
    optics: { pixelSizeUm: 3.76, focalLengthMm: 400, fNumber: 4 },
    stars: { count: stars, fluxMinE: 3000, fluxMaxE: 400000, minSeparationPx: 10 },
    psf: { kind: 'analytic', model: 'moffat', fwhmMajorPx: 3, fwhmMinorPx: 2.7, beta: 3.5, vary: { fwhmMajorPx: [2.6, 3.6], axisRatio: [0.8, 1], thetaDeg: [-90, 90] } },
    sky: { level: 900, gradientX: 120, gradientY: -60 },
    noise: { gain: 1, readNoiseE: 3, biasAdu: 500 },
    hotPixels: { count: hotPixels, minAdu: 2000, maxAdu: 20000 },
  });
}
