// npm run bench: end-to-end speed and memory of `analyze` on simulated frames.
// Prints figures; asserts nothing on time (tests never do).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import os from 'node:os';
import { renderScene } from '../../core/simulate/render.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { parseScene } from '../../core/simulate/scene.ts';

const dir = path.resolve('test-output/bench');
mkdirSync(dir, { recursive: true });

const sizes = [
  { width: 6000, height: 4000, stars: 4000 },
  { width: 9600, height: 6400, stars: 10240 }, // the same star density
];

function benchFrame(width: number, height: number, stars: number): string {
  const file = path.join(dir, `bench-${width}x${height}.fits`);
  if (existsSync(file)) return file;
  const t = performance.now();
  const scene = parseScene({
    width, height, seed: 20261201,
    optics: { pixelSizeUm: 3.76, focalLengthMm: 400, fNumber: 4 },
    stars: { count: stars, fluxMinE: 3000, fluxMaxE: 400000, minSeparationPx: 10 },
    psf: { kind: 'analytic', model: 'moffat', fwhmMajorPx: 3, fwhmMinorPx: 2.7, beta: 3.5, vary: { fwhmMajorPx: [2.6, 3.6], axisRatio: [0.8, 1], thetaDeg: [-90, 90] } },
    sky: { level: 900, gradientX: 120, gradientY: -60 },
    noise: { gain: 1, readNoiseE: 3, biasAdu: 500 },
    hotPixels: { count: 300, minAdu: 2000, maxAdu: 20000 },
  });
  const res = renderScene(scene);
  writeFileSync(file, fitsBytes(res));
  process.stdout.write(`  (rendered ${path.basename(file)} in ${((performance.now() - t) / 1000).toFixed(1)} s)\n`);
  return file;
}

process.stdout.write(`skyloupe pipeline bench: ${os.cpus().length} cores, node ${process.version}\n`);
for (const s of sizes) {
  const file = benchFrame(s.width, s.height, s.stars);
  const run = spawnSync(process.execPath, ['bin/run-ts.mjs', 'test/bench/pipeline-run.ts', file], { encoding: 'utf8' });
  if (run.status !== 0) {
    process.stdout.write(`${s.width}x${s.height}: run failed\n${run.stderr}\n`);
    process.exitCode = 1;
    continue;
  }
  const r = JSON.parse(run.stdout.trim().split('\n').pop()!);
  const stages = ['read', 'plane', 'sky', 'subtract', 'psf-size', 'filter', 'detect', 'stamps', 'measure', 'finish', 'report']
    .map((k) => `${k} ${Number(r[k] ?? 0).toFixed(3)}`).join(', ');
  process.stdout.write(
    `${s.width}x${s.height} (${(s.width * s.height / 1e6).toFixed(1)} MP, ${r.stars} stars measured, ${r.usable} usable): ` +
    `read to report ${r.total.toFixed(2)} s, peak RSS ${r.peakRssMB.toFixed(0)} MB\n  stages (s): ${stages}\n  diagnosis on top: ${r.diagnose.toFixed(2)} s\n`,
  );
}
