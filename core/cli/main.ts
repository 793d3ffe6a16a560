import path from 'node:path';
import { readFrame } from '../frame/read.ts';
import { analyzeFrame } from '../analyze.ts';
import { reportFromAnalysis } from '../report/from-analysis.ts';
import { starsCsv } from '../report/csv.ts';
import { writeFileAtomic } from '../report/save.ts';
import { SkyloupeError, exitCodeFor, usage } from '../errors.ts';
import { parse, positiveNumber } from './args.ts';
import { formatSummary } from './summary.ts';
import { simulateToFiles } from '../simulate/write.ts';
import type { CfaPattern } from '../frame/types.ts';
import { VERSION } from '../version.ts';

const HELP_MAIN = `skyloupe ${VERSION}: star shapes across the field of a night-sky frame

usage: skyloupe COMMAND [options]

commands:
  analyze FRAME      measure every star and summarise the field
  simulate SCENE OUT render a synthetic frame (OUT.fits) and its truth (OUT.truth.json)

skyloupe COMMAND --help shows the options of a command.
exit codes: 0 done, 2 bad usage, 3 unreadable input, 4 no usable stars`;

const HELP_ANALYZE = `usage: skyloupe analyze FRAME [options]

FRAME is a FITS (.fits, .fit, .fts), TIFF, PNG or JPEG file; it is only read.

options:
  --json FILE|-         write the report (schema skyloupe.report/1) to FILE, or - for stdout
  --csv FILE            write the star table as CSV
  --focal-length MM     focal length (overrides the file's metadata)
  --pixel-size UM       pixel pitch in micrometres, binning included (overrides)
  --f-number N          working f-number (overrides)
  --cfa PATTERN         treat the frame as a colour-filter mosaic: RGGB, BGGR, GRBG or GBRG
  --threshold SIGMA     detection threshold in filtered-noise units (default 5)
  --workers N           worker threads for the per-star fits (default: all cores; 0 = none)
  --quiet               print nothing but errors
  -h, --help            this text`;

const HELP_SIMULATE = `usage: skyloupe simulate SCENE.json OUT.fits

Renders the scene through the optics model and writes OUT.fits (16-bit) and
OUT.truth.json (the true stars and optics) beside it. Existing files are replaced atomically.`;

export async function main(argv: string[]): Promise<number> {
  const out = (s: string) => process.stdout.write(s.endsWith('\n') ? s : s + '\n');
  try {
    const [cmd, ...rest] = argv;
    if (!cmd || cmd === '--help' || cmd === '-h' || cmd === 'help') { out(HELP_MAIN); return cmd ? 0 : 2; }
    if (cmd === '--version') { out(VERSION); return 0; }
    switch (cmd) {
      case 'analyze': return await analyzeCommand(rest, out);
      case 'simulate': return await simulateCommand(rest, out);
      default: throw usage(`unknown command "${cmd}" (commands: analyze, simulate; see skyloupe --help)`);
    }
  } catch (err) {
    const code = exitCodeFor(err);
    const msg = err instanceof SkyloupeError ? err.message : `internal error: ${err instanceof Error ? err.message : String(err)}`;
    process.stderr.write(`skyloupe: ${msg}\n`);
    if (!(err instanceof SkyloupeError) && process.env.SKYLOUPE_DEBUG) process.stderr.write(String((err as Error)?.stack) + '\n');
    return code;
  }
}

async function analyzeCommand(argv: string[], out: (s: string) => void): Promise<number> {
  const { values, positionals } = parse(argv, {
    json: { type: 'string' },
    csv: { type: 'string' },
    'focal-length': { type: 'string' },
    'pixel-size': { type: 'string' },
    'f-number': { type: 'string' },
    cfa: { type: 'string' },
    threshold: { type: 'string' },
    workers: { type: 'string' },
    quiet: { type: 'boolean' },
  }, 'analyze');
  if (values.help) { out(HELP_ANALYZE); return 0; }
  if (positionals.length !== 1) throw usage('analyze: give exactly one FRAME (see skyloupe analyze --help)');
  const framePath = positionals[0];
  const user = {
    focalLengthMm: positiveNumber(values['focal-length'], 'focal-length', 'analyze'),
    pixelSizeUm: positiveNumber(values['pixel-size'], 'pixel-size', 'analyze'),
    fNumber: positiveNumber(values['f-number'], 'f-number', 'analyze'),
  };
  let cfa: CfaPattern | undefined;
  if (values.cfa !== undefined) {
    const p = String(values.cfa).toUpperCase();
    if (!['RGGB', 'BGGR', 'GRBG', 'GBRG'].includes(p)) throw usage(`analyze: --cfa must be RGGB, BGGR, GRBG or GBRG, got "${values.cfa}"`);
    cfa = p as CfaPattern;
  }
  const threshold = positiveNumber(values.threshold, 'threshold', 'analyze');
  let workers: number | undefined;
  if (values.workers !== undefined) {
    workers = Number(values.workers);
    if (!Number.isInteger(workers) || workers < 0 || workers > 64) throw usage(`analyze: --workers needs a whole number from 0 to 64, got "${values.workers}"`);
  }
  for (const [opt, target] of [['json', values.json], ['csv', values.csv]] as const) {
    if (typeof target === 'string' && target !== '-' && path.resolve(target) === path.resolve(framePath)) {
      throw usage(`analyze: --${opt} would overwrite the input frame; choose another file`);
    }
  }
  const frame = await readFrame(framePath);
  const analysis = await analyzeFrame(frame, { user, cfa, threshold, workers });
  const report = reportFromAnalysis(analysis, framePath);
  if (report.detection.usedForField === 0) {
    throw new SkyloupeError('no-stars', `${analysis.detection.candidates} detections but no usable star (all flagged: ${Object.entries(report.detection.flagged).map(([k, v]) => `${v} ${k}`).join(', ')})`);
  }
  const json = JSON.stringify(report, null, 1) + '\n';
  if (values.json === '-') process.stdout.write(json);
  else if (typeof values.json === 'string') await writeFileAtomic(values.json, json);
  if (typeof values.csv === 'string') {
    if (values.csv === '-') process.stdout.write(starsCsv(report));
    else await writeFileAtomic(values.csv, starsCsv(report));
  }
  if (!values.quiet && values.json !== '-' && values.csv !== '-') out(formatSummary(report));
  return 0;
}

async function simulateCommand(argv: string[], out: (s: string) => void): Promise<number> {
  const { values, positionals } = parse(argv, {}, 'simulate');
  if (values.help) { out(HELP_SIMULATE); return 0; }
  if (positionals.length !== 2) throw usage('simulate: give SCENE.json and OUT.fits (see skyloupe simulate --help)');
  const [scene, target] = positionals;
  if (path.resolve(scene) === path.resolve(target)) throw usage('simulate: OUT.fits would overwrite the scene file');
  const { truthPath } = await simulateToFiles(scene, target);
  out(`wrote ${target} and ${truthPath}`);
  return 0;
}
