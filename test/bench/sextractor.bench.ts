// Side-by-side bench: skyloupe end to end (the CLI, `analyze FILE --json`, full PSF fits) and
// Debian's source-extractor (moments only) on the same simulated 24-megapixel frame, with the
// same detection threshold number (skyloupe: filtered-noise units; SExtractor DETECT_THRESH:
// background sigma on the filtered image, DETECT_MINAREA 5), both using every core. Prints wall
// times, their ratio, and the accuracy of each against the simulator's truth. Asserts nothing.
// Run: node bin/run-ts.mjs test/bench/sextractor.bench.ts [--threshold 5]
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { renderScene, type SimTruthStar } from '../../core/simulate/render.ts';
import { benchScene } from './scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { matchStars, median, requireSextractor, runSextractor } from '../reference/crosscheck-sextractor.ts';

const dir = path.resolve('test-output/bench');
mkdirSync(dir, { recursive: true });
const ti = process.argv.indexOf('--threshold');
const threshold = ti > 0 ? Number(process.argv[ti + 1]) : 5;

const W = 6000, H = 4000;
const file = path.join(dir, `sx-bench-${W}x${H}.fits`);
const truthFile = path.join(dir, `sx-bench-${W}x${H}.truth.json`);
if (!existsSync(file) || !existsSync(truthFile)) {
  const t = performance.now();
  // The scene of pipeline.bench.ts (scene.ts), at 24 MP.
  const res = renderScene(benchScene(W, H, 4000, 300));
  writeFileSync(file, fitsBytes(res));
  writeFileSync(truthFile, JSON.stringify(res.truth.stars));
  process.stdout.write(`(rendered ${path.basename(file)} in ${((performance.now() - t) / 1000).toFixed(1)} s)\n`);
}
const truth: SimTruthStar[] = JSON.parse(readFileSync(truthFile, 'utf8'));
const usable = truth.filter((t) => !t.saturated);

process.stdout.write(`side-by-side bench, ${W}x${H} (${(W * H / 1e6).toFixed(0)} MP), ${truth.length} true stars, threshold ${threshold}; ${os.cpus().length} cores, node ${process.version}, ${requireSextractor()}\n`);

// skyloupe: the CLI end to end, as a user runs it.
const out = path.join(dir, 'sx-bench-report.json');
const t0 = performance.now();
const run = spawnSync(process.execPath, ['bin/skyloupe.mjs', 'analyze', file, '--json', out, '--threshold', String(threshold), '--quiet'], { encoding: 'utf8' });
const skyS = (performance.now() - t0) / 1000;
if (run.status !== 0) { process.stdout.write(`skyloupe failed (${run.status}): ${run.stderr}\n`); process.exit(1); }
const report = JSON.parse(readFileSync(out, 'utf8')) as { stars: { x: number; y: number; fwhmPx: number; hfdPx: number; ellipticity: number; flags: string[] }[] };

// Source Extractor, same file, all cores.
const sx = runSextractor(file, { threshold, minArea: 5, backSize: 64, saturation: 65000, threads: 0 });

interface Row { x: number; y: number; fwhmPx: number; hfdPx: number; ellipticity: number; clean: boolean }
const sky: Row[] = report.stars.map((s) => ({ ...s, clean: s.flags.length === 0 }));
const sex: Row[] = sx.stars.map((s) => ({ ...s, clean: s.flags === 0 }));

/** Accuracy against the truth: completeness, spurious detections, centroid error, size and shape errors on clean matches. */
function accuracy(rows: Row[]) {
  const all = matchStars(usable, rows, 1);
  const spurious = rows.length - matchStars(rows, truth, 2).length;
  const clean = all.filter(([, r]) => r.clean);
  const dpos = Math.sqrt(clean.reduce((a, [t, r]) => a + (t.x - r.x) ** 2 + (t.y - r.y) ** 2, 0) / Math.max(1, clean.length));
  const tf = (t: SimTruthStar) => Math.sqrt(t.recordedFwhmMajorPx! * t.recordedFwhmMinorPx!);
  const te = (t: SimTruthStar) => 1 - t.recordedFwhmMinorPx! / t.recordedFwhmMajorPx!;
  // Moffat half-light diameter 2 alpha sqrt(2^(1/(beta-1)) - 1) (Moffat 1969, integrating the profile), circularised; pixel box excluded.
  const th = (t: SimTruthStar) => {
    const b = t.beta!;
    const alpha = Math.sqrt(t.fwhmMajorPx! * t.fwhmMinorPx!) / (2 * Math.sqrt(2 ** (1 / b) - 1));
    return 2 * alpha * Math.sqrt(2 ** (1 / (b - 1)) - 1);
  };
  return {
    detected: rows.length, completeness: all.length / usable.length, spurious, clean: clean.length, centroidRmsPx: dpos,
    fwhmErr: median(clean.map(([t, r]) => r.fwhmPx / tf(t) - 1)),
    fwhmScatter: median(clean.map(([t, r]) => Math.abs(r.fwhmPx / tf(t) - 1))),
    hfdErr: median(clean.map(([t, r]) => r.hfdPx / th(t) - 1)),
    ellErr: median(clean.map(([t, r]) => r.ellipticity - te(t))),
    ellScatter: median(clean.map(([t, r]) => Math.abs(r.ellipticity - te(t)))),
  };
}
const a = accuracy(sky), b = accuracy(sex);
const pct = (v: number) => `${(100 * v).toFixed(1)} %`;
const line = (label: string, f: (x: typeof a) => string) => `  ${label.padEnd(34)} ${f(a).padStart(12)} ${f(b).padStart(14)}\n`;
process.stdout.write(
  `  ${''.padEnd(34)} ${'skyloupe'.padStart(12)} ${'SExtractor'.padStart(14)}\n` +
  `  ${'wall time, end to end'.padEnd(34)} ${(skyS.toFixed(2) + ' s').padStart(12)} ${(sx.seconds.toFixed(2) + ' s').padStart(14)}\n` +
  line('detections', (x) => String(x.detected)) +
  line('true stars found (within 1 px)', (x) => pct(x.completeness)) +
  line('detections with no true star <2 px', (x) => String(x.spurious)) +
  line('clean matched stars', (x) => String(x.clean)) +
  line('centroid RMS error (clean)', (x) => `${x.centroidRmsPx.toFixed(3)} px`) +
  line('median FWHM error (bias)', (x) => pct(x.fwhmErr)) +
  line('median |FWHM error|', (x) => pct(x.fwhmScatter)) +
  line('median HFD error (vs no-box HFD)', (x) => pct(x.hfdErr)) +
  line('median ellipticity error (bias)', (x) => x.ellErr.toFixed(3)) +
  line('median |ellipticity error|', (x) => x.ellScatter.toFixed(3)) +
  `  time ratio skyloupe / SExtractor: ${(skyS / sx.seconds).toFixed(2)} (aim: <= 1.0; skyloupe fits a PSF to every star, SExtractor measures moments)\n`,
);
