/**
 * Simulator timings (prints figures, asserts nothing):
 *   node bin/run-ts.mjs test/bench/simulate.bench.ts [--big]
 * --big adds a 9600 x 6400 analytic frame (~250 MB of pixels).
 */
import { readFileSync } from 'node:fs';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene, type SceneInput } from '../../core/simulate/scene.ts';

function time(label: string, input: SceneInput): void {
  const scene = parseScene(input);
  const c0 = process.cpuUsage();
  const t0 = performance.now();
  const r = renderScene(scene);
  const wall = performance.now() - t0;
  const c = process.cpuUsage(c0);
  const photons = r.truth.global.photonsTotal;
  process.stdout.write(
    `${label.padEnd(46)} wall ${(wall / 1000).toFixed(2)} s  cpu ${((c.user + c.system) / 1e6).toFixed(2)} s` +
    `  stars ${r.truth.stars.length}${typeof photons === 'number' ? `  photons ${(photons / 1e6).toFixed(1)}M` : ''}\n`,
  );
}

const field = { count: 4000, fluxMinE: 5000, fluxMaxE: 1e6, minSeparationPx: 12 };
time('analytic gaussian 6000x4000, 4000 stars', {
  width: 6000, height: 4000, stars: field,
  psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 3, fwhmMinorPx: 2.7, vary: { thetaDeg: [-90, 90] } },
});
time('analytic moffat b=2.5 6000x4000, 4000 stars', {
  width: 6000, height: 4000, stars: field,
  psf: { kind: 'analytic', model: 'moffat', beta: 2.5, fwhmMajorPx: 3, fwhmMinorPx: 2.7, vary: { thetaDeg: [-90, 90] } },
});
time('optics (moffat seeing) 6000x4000, 4000 stars', {
  width: 6000, height: 4000, stars: { ...field, fluxMaxE: 3e5 },
  psf: {
    kind: 'optics', seeing: { model: 'moffat', fwhmPx: 2.5 },
    aberrations: { tiltXUmAcross: 30, astigmatismUmPerMm2: 0.3, comaUmPerMm: 1 },
  },
});
const demo = JSON.parse(readFileSync(new URL('../../sample-data/demo-scene.json', import.meta.url), 'utf8'));
time('demo scene 2400x1600 (optics)', demo);
if (process.argv.includes('--big')) {
  time('analytic gaussian 9600x6400, 8000 stars', {
    width: 9600, height: 6400, stars: { ...field, count: 8000 },
    psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 3, fwhmMinorPx: 2.7 },
  });
}
