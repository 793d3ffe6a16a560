// npm run bench: end-to-end speed and memory of `analyze` on simulated frames.
// Prints figures; asserts nothing on time (tests never do).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import os from 'node:os';
import { renderScene } from '../../core/simulate/render.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { benchScene } from './scene.ts';

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
  const scene = benchScene(width, height, stars, 300);
  const res = renderScene(scene);
  writeFileSync(file, fitsBytes(res));
  process.stdout.write(`  (rendered ${path.basename(file)} in ${((performance.now() - t) / 1000).toFixed(1)} s)\n`);
  return file;
}

process.stdout.write(`skyloupe pipeline bench: ${os.cpus().length} cores, node ${process.version}\n`);
// This machine's speed varies from run to run (shared host): each frame runs RUNS times, each in
// a fresh process (cold start, as a user's run), and the figures are the median run's, with the
// spread beside them.
const RUNS = Number(process.env.BENCH_RUNS ?? 5);
for (const s of sizes) {
  const file = benchFrame(s.width, s.height, s.stars);
  const runs: Record<string, number>[] = [];
  for (let k = 0; k < RUNS; k++) {
    const run = spawnSync(process.execPath, ['bin/run-ts.mjs', 'test/bench/pipeline-run.ts', file], { encoding: 'utf8' });
    if (run.status !== 0) {
      process.stdout.write(`${s.width}x${s.height}: run failed\n${run.stderr}\n`);
      process.exitCode = 1;
      break;
    }
    runs.push(JSON.parse(run.stdout.trim().split('\n').pop()!));
  }
  if (runs.length === 0) continue;
  const totals = runs.map((r) => r.total).sort((a, b) => a - b);
  const r = [...runs].sort((a, b) => a.total - b.total)[(runs.length - 1) >> 1];
  const stages = ['read', 'plane', 'sky', 'subtract', 'psf-size', 'filter', 'detect', 'stamps', 'measure', 'finish', 'astrometry', 'report']
    .map((k) => `${k} ${Number(r[k] ?? 0).toFixed(3)}`).join(', ');
  const diag = runs.map((x) => x.diagnose).sort((a, b) => a - b);
  process.stdout.write(
    `${s.width}x${s.height} (${(s.width * s.height / 1e6).toFixed(1)} MP, ${r.stars} stars measured, ${r.usable} usable): ` +
    `read to report ${r.total.toFixed(2)} s (median of ${runs.length}; range ${totals[0].toFixed(2)}-${totals[totals.length - 1].toFixed(2)} s), ` +
    `peak RSS ${Math.max(...runs.map((x) => x.peakRssMB)).toFixed(0)} MB\n  stages of the median run (s): ${stages}\n` +
    `  diagnosis on top: ${diag[(diag.length - 1) >> 1].toFixed(2)} s (median)\n`,
  );
}
