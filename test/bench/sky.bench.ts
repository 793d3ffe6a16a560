// npm run bench (sky part): what plate solving adds to a 24-megapixel analysis, with a scale hint
// (the header's focal length and pixel size) and blind (no optics in the header), each run in a
// fresh process; first with an empty asterism cache (the first analysis on a machine), then warm.
// The frame: the bundled catalogue's stars through a 50 mm lens with -2 % barrel distortion on a
// 6000 x 4000 sensor of 6 um pixels (an invented scene, rendered by core/simulate).
// Prints figures; asserts nothing on time.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { renderScene } from '../../core/simulate/render.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { bundledCatalogue } from '../../core/sky/bundled.ts';
import { skyFieldStars, type SkyLens } from '../../core/simulate/sky-field.ts';

const dir = path.resolve('test-output/bench');
mkdirSync(dir, { recursive: true });
const W = 6000, H = 4000;
const lens: SkyLens = { raDeg: 84.5, decDeg: 3, northDeg: -90, mirrored: false, projection: 'rectilinear', focalLengthMm: 50, pixelSizeUm: 6, k1: -0.02, k2: 0, centreOffsetPx: { x: 0, y: 0 } };

function frame(withOptics: boolean): string {
  const file = path.join(dir, `sky-${W}x${H}-${withOptics ? 'hint' : 'blind'}.fits`);
  if (existsSync(file)) return file;
  const stars = skyFieldStars(bundledCatalogue(), { width: W, height: H, lens, magLimit: 9, fluxMag0E: 2e7, maxStars: 4000, marginPx: 12 });
  const res = renderScene({
    width: W, height: H, seed: 7,
    optics: { pixelSizeUm: 6, focalLengthMm: 50, fNumber: 2.8 },
    stars: stars.map((s) => ({ x: s.x, y: s.y, fluxE: s.fluxE })),
    psf: { kind: 'analytic', model: 'moffat', fwhmMajorPx: 2.8, fwhmMinorPx: 2.6, beta: 3.5 },
    sky: { level: 900 },
  } as Parameters<typeof renderScene>[0]);
  if (!withOptics) res.cards = res.cards.filter((c) => !['FOCALLEN', 'XPIXSZ', 'YPIXSZ', 'PIXSIZE1', 'PIXSIZE2', 'FOCRATIO', 'APTDIA'].includes(c.key));
  writeFileSync(file, fitsBytes(res));
  return file;
}

const RUNS = Number(process.env.BENCH_RUNS ?? 3);
process.stdout.write(`skyloupe sky bench: ${os.cpus().length} cores, node ${process.version}; 24 MP catalogue field, 50 mm, -2 % barrel\n`);
for (const withOptics of [true, false]) {
  const file = frame(withOptics);
  const cache = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-bench-cache-'));
  const results: { cold: boolean; r: Record<string, number | string | boolean | null> }[] = [];
  for (let k = 0; k <= RUNS; k++) {
    const run = spawnSync(process.execPath, ['bin/run-ts.mjs', 'test/bench/sky-run.ts', file], { encoding: 'utf8', env: { ...process.env, SKYLOUPE_SKY_CACHE: cache } });
    if (run.status !== 0) { process.stdout.write(`run failed: ${run.stderr}\n`); process.exitCode = 1; break; }
    results.push({ cold: k === 0, r: JSON.parse(run.stdout.trim().split('\n').pop()!) });
  }
  rmSync(cache, { recursive: true, force: true });
  if (!results.length) continue;
  const warm = results.filter((x) => !x.cold).map((x) => Number(x.r.astrometry)).sort((a, b) => a - b);
  const cold = Number(results[0].r.astrometry);
  const r0 = results[results.length - 1].r;
  process.stdout.write(`  ${withOptics ? 'with a scale hint' : 'blind (no optics)'}: solving adds ${warm[(warm.length - 1) >> 1].toFixed(2)} s (median of ${warm.length} warm runs, range ${warm[0].toFixed(2)}-${warm[warm.length - 1].toFixed(2)}), ${cold.toFixed(2)} s with an empty asterism cache; `
    + `analysis total ${Number(r0.total).toFixed(2)} s; ${r0.solved ? `placed (${r0.mode}), ${r0.matched} stars matched, ${r0.focalLengthMm === null ? 'focal length needs the pixel size' : `f ${Number(r0.focalLengthMm).toFixed(2)} mm`}, ${r0.pattern} ${Number(r0.cornerPercent).toFixed(2)} %` : 'NOT placed'}\n`);
}
