// node bin/run-ts.mjs test/bench/scale.bench.ts: a 100-megapixel frame (12000 x 8333, about
// 20000 stars) through read -> analyze -> report in a child process, so the peak RSS printed
// is that run's alone. The goal is under 8 GB; prints figures, asserts nothing on time.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import os from 'node:os';
import { renderScene } from '../../core/simulate/render.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { benchScene } from './scene.ts';

const dir = path.resolve('test-output/bench');
mkdirSync(dir, { recursive: true });
const width = 12000;
const height = 8333; // the simulator caps frames at 1e8 pixels
const file = path.join(dir, `scale-${width}x${height}.fits`);
if (!existsSync(file)) {
  const t = performance.now();
  const res = renderScene(benchScene(width, height, 20000, 500, 20261202));
  writeFileSync(file, fitsBytes(res));
  process.stdout.write(`(rendered ${path.basename(file)} in ${((performance.now() - t) / 1000).toFixed(1)} s)\n`);
}
process.stdout.write(`skyloupe 100 MP bench: ${os.cpus().length} cores, node ${process.version}\n`);
const run = spawnSync(process.execPath, ['bin/run-ts.mjs', 'test/bench/pipeline-run.ts', file], { encoding: 'utf8', maxBuffer: 1 << 26 });
if (run.status !== 0) {
  process.stdout.write(`run failed\n${run.stderr}\n`);
  process.exitCode = 1;
} else {
  const r = JSON.parse(run.stdout.trim().split('\n').pop()!);
  process.stdout.write(`${width}x${height} (${(width * height / 1e6).toFixed(1)} MP): ${r.stars} measured, ${r.usable} usable, read to report ${r.total.toFixed(1)} s, diagnosis ${r.diagnose.toFixed(1)} s, peak RSS ${r.peakRssMB.toFixed(0)} MB (limit 8192)\n`);
}
