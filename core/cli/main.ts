import path from 'node:path';
import { readFrame } from '../frame/read.ts';
import { analyzeFrame } from '../analyze.ts';
import { startPool } from '../kernels.ts';
import { reportFromAnalysis } from '../report/from-analysis.ts';
import { starsCsv } from '../report/csv.ts';
import { reportHtml } from '../report/html.ts';
import { framePictures } from '../report/pictures.ts';
import { writeFileAtomic } from '../report/save.ts';
import { SkyloupeError, exitCodeFor, usage } from '../errors.ts';
import { parse, positiveNumber } from './args.ts';
import { formatSummary } from './summary.ts';
import { simulateToFiles } from '../simulate/write.ts';
import type { CfaPattern } from '../frame/types.ts';
import { VERSION } from '../version.ts';
import { runCompare, formatCompare, runSweep, formatSweep, runFocusPair, formatFocusPair } from '../series/index.ts';
import type { FrameIdentity } from '../series/input.ts';
import { identityOf } from '../series/identity.ts';
import { throughFocusCommand } from './through-focus.ts';
import type { Frame } from '../frame/types.ts';
import type { Analysis } from '../analyze.ts';
import { catalogueCommand, loadCatalogueFile } from '../sky/cli.ts';

const HELP_MAIN = `skyloupe ${VERSION}: star shapes across the field of a night-sky frame

usage: skyloupe COMMAND [options]

commands:
  analyze FRAME         measure every star, map the field, say what is wrong
  compare A B           the same site and camera through two lenses or settings: per-zone verdicts
  sweep --at MM=FRAME   frames at known spacer distances: the best spacing
  focus-pair NEAR FAR   two frames a known focus step apart: the signed sensor tilt
  through-focus --at UM=FRAME   a focus series: focus surface, tilt, curvature, astigmatism, spherical
  simulate SCENE OUT    render a synthetic frame (OUT.fits) and its truth (OUT.truth.json)
  catalogue OUT INDEX.. make a deeper star catalogue for plate solving from astrometry.net index files
  serve                 the desktop program's page in a browser, on 127.0.0.1

skyloupe COMMAND --help shows the options of a command.
exit codes: 0 done, 2 bad usage, 3 unreadable input, 4 no usable stars`;

const HELP_ANALYZE = `usage: skyloupe analyze FRAME [options]

FRAME is a FITS file (also tile-compressed .fz and gzipped .fits.gz), a camera raw
(CR2, CR3, NEF, ARW, RAF, ORF, DNG), TIFF, PNG or JPEG; it is only read.

options:
  --json FILE|-         write the report (schema skyloupe.report/1) to FILE, or - for stdout
  --csv FILE            write the star table as CSV
  --html FILE           write a self-contained, printable HTML report with the figures
  --focal-length MM     focal length (overrides the file's metadata)
  --pixel-size UM       pixel pitch in micrometres, binning included (overrides)
  --f-number N          working f-number (overrides)
  --cfa PATTERN         treat the frame as a colour-filter mosaic: RGGB, BGGR, GRBG or GBRG
  --threshold SIGMA     detection threshold in filtered-noise units (default 5)
  --workers N           worker threads for the per-star fits (default: all cores; 0 = none)
  --catalogue FILE      plate-solve with this star catalogue (made by skyloupe catalogue) instead
                        of the bundled Hipparcos (deeper catalogues serve longer focal lengths)
  --no-sky              do not place the frame on the sky (no plate solution, no distortion)
  --quiet               print nothing but errors
  -h, --help            this text`;

const OPTICS_HELP = `  --focal-length MM     focal length (overrides the files' metadata)
  --pixel-size UM       pixel pitch in micrometres, binning included (overrides)
  --f-number N          working f-number (overrides)
  --json FILE|-         write the result as JSON to FILE, or - for stdout
  -h, --help            this text`;

const HELP_COMPARE = `usage: skyloupe compare A B [options]

Two frames of the same site and camera through two lenses or settings. Gives a verdict
per zone (centre, edges, corners): which is sharper and rounder, and how sure. Frames of
different sizes or cameras, the same picture twice, or plate scales more than twice
apart are refused.

options:
${OPTICS_HELP}`;

const HELP_SWEEP = `usage: skyloupe sweep --at MM=FRAME --at MM=FRAME ... [options]

Frames taken at known spacer distances (MM, e.g. --at 55.0=a.fits --at 55.5=b.fits).
Fits the corner aberration against distance and gives the best spacing and its
uncertainty. Refocus the centre the same way at every step. Three frames at least, of
one camera at one setting (same size, camera and plate scale), each a picture of its own.

options:
${OPTICS_HELP}`;

const HELP_FOCUS_PAIR = `usage: skyloupe focus-pair NEAR FAR --step UM [options]

Two frames a known focus step apart (UM, micrometres at the sensor, FAR minus NEAR;
positive = FAR taken with the sensor farther from the lens) tell which side of the
sensor must come toward the lens. The tilt is the change of best-focus position across
the width and height, with field curvature (and astigmatism when the stars show it), in
the same terms as through-focus.

options:
  --step UM             the focus step between the two frames, micrometres
${OPTICS_HELP}`;

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
      case 'compare': return await compareCommand(rest, out);
      case 'sweep': return await sweepCommand(rest, out);
      case 'focus-pair': return await focusPairCommand(rest, out);
      case 'through-focus': return await throughFocusCommand(rest, out, { analyzeAll, emit, userOptics, opticsOptions: OPTICS_OPTIONS, opticsHelp: OPTICS_HELP });
      case 'catalogue': return await catalogueCommand(rest, out);
      default: throw usage(`unknown command "${cmd}" (commands: analyze, compare, sweep, focus-pair, through-focus, simulate, catalogue, serve; see skyloupe --help)`);
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
    html: { type: 'string' },
    'focal-length': { type: 'string' },
    'pixel-size': { type: 'string' },
    'f-number': { type: 'string' },
    cfa: { type: 'string' },
    threshold: { type: 'string' },
    workers: { type: 'string' },
    quiet: { type: 'boolean' },
    catalogue: { type: 'string' },
    'no-sky': { type: 'boolean' },
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
  for (const [opt, target] of [['json', values.json], ['csv', values.csv], ['html', values.html]] as const) {
    if (typeof target === 'string' && target !== '-' && path.resolve(target) === path.resolve(framePath)) {
      throw usage(`analyze: --${opt} would overwrite the input frame; choose another file`);
    }
  }
  if (values['no-sky'] && values.catalogue !== undefined) throw usage('analyze: --catalogue has no use with --no-sky');
  const catalogueFile = typeof values.catalogue === 'string' ? values.catalogue : null;
  const catalogue = catalogueFile ? await loadCatalogueFile(catalogueFile) : null;
  // the worker threads start while the frame is read
  const pool = await startPool(workers);
  let analysis: Analysis;
  let frame: Frame;
  try {
    frame = await readFrame(framePath);
    analysis = await analyzeFrame(frame, { user, cfa, threshold, pool, solve: !values['no-sky'], sky: { catalogue, catalogueFile } });
  } finally {
    void pool.close();
  }
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
  if (typeof values.html === 'string') {
    // the same picture as the desktop program: the stretched sky (close-ups are the zone stacks in the report)
    const pictures = await framePictures({ data: frame.data, width: frame.width, height: frame.height, flipY: frame.displayTopRow === 'last', sky: analysis.sky });
    await writeFileAtomic(values.html, reportHtml(report, { name: path.basename(framePath), ...pictures }));
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

const OPTICS_OPTIONS = {
  'focal-length': { type: 'string' },
  'pixel-size': { type: 'string' },
  'f-number': { type: 'string' },
  json: { type: 'string' },
} as const;

function userOptics(values: Record<string, string | boolean | undefined>, command: string) {
  return {
    focalLengthMm: positiveNumber(values['focal-length'], 'focal-length', command),
    pixelSizeUm: positiveNumber(values['pixel-size'], 'pixel-size', command),
    fNumber: positiveNumber(values['f-number'], 'f-number', command),
  };
}

/**
 * Read and analyse several frames one after the other (each uses all cores), through one
 * worker pool: its threads stay warm from frame to frame.
 */
async function analyzeAll(paths: string[], user: ReturnType<typeof userOptics>, onFrame?: (frame: Frame, a: Analysis, k: number) => void): Promise<Analysis[]> {
  const out: Analysis[] = [];
  const pool = await startPool();
  try {
    for (const [k, p] of paths.entries()) {
      const frame = await readFrame(p);
      try {
        out.push(await analyzeFrame(frame, { user, pool, solve: false }));
      } catch (err) {
        // In a series, say which frame had no stars.
        if (err instanceof SkyloupeError && !err.message.startsWith(p)) throw new SkyloupeError(err.kind, `${p}: ${err.message}`);
        throw err;
      }
      onFrame?.(frame, out[k], k);
    }
  } finally {
    void pool.close();
  }
  return out;
}

async function emit(values: Record<string, string | boolean | undefined>, result: unknown, text: string, inputs: string[], out: (s: string) => void): Promise<void> {
  const json = JSON.stringify(result, null, 1) + '\n';
  if (typeof values.json === 'string' && values.json !== '-') {
    if (inputs.some((p) => path.resolve(p) === path.resolve(values.json as string))) throw usage('--json would overwrite an input frame; choose another file');
    await writeFileAtomic(values.json, json);
  }
  if (values.json === '-') process.stdout.write(json);
  else out(text);
}

async function compareCommand(argv: string[], out: (s: string) => void): Promise<number> {
  const { values, positionals } = parse(argv, { ...OPTICS_OPTIONS }, 'compare');
  if (values.help) { out(HELP_COMPARE); return 0; }
  if (positionals.length !== 2) throw usage('compare: give two frames, A and B (see skyloupe compare --help)');
  const ids: FrameIdentity[] = [];
  const [a, b] = await analyzeAll(positionals, userOptics(values, 'compare'), (frame, _a, k) => { ids[k] = identityOf(frame); });
  const r = runCompare(a, b, { A: positionals[0], B: positionals[1] }, { A: ids[0], B: ids[1] });
  await emit(values, r, formatCompare(r), positionals, out);
  return 0;
}

async function sweepCommand(argv: string[], out: (s: string) => void): Promise<number> {
  const { values, positionals } = parse(argv, { ...OPTICS_OPTIONS, at: { type: 'string', multiple: true } }, 'sweep');
  if (values.help) { out(HELP_SWEEP); return 0; }
  if (positionals.length) throw usage(`sweep: give frames as --at MM=FRAME, not "${positionals[0]}"`);
  const at = (values.at as unknown as string[] | undefined) ?? [];
  if (at.length < 3) throw usage('sweep: give at least three --at MM=FRAME (four or more are better)');
  const items = at.map((spec) => {
    const m = /^\s*([-+]?\d+(?:\.\d+)?)\s*=(.+)$/.exec(spec);
    if (!m) throw usage(`sweep: --at needs MM=FRAME, got "${spec}"`);
    return { spacingMm: Number(m[1]), file: m[2] };
  });
  const ids: FrameIdentity[] = [];
  const analyses = await analyzeAll(items.map((i) => i.file), userOptics(values, 'sweep'), (frame, _a, k) => { ids[k] = identityOf(frame); });
  const r = runSweep(items.map((it, k) => ({ spacingMm: it.spacingMm, analysis: analyses[k], label: it.file, identity: ids[k] })));
  await emit(values, r, formatSweep(r), items.map((i) => i.file), out);
  return 0;
}

async function focusPairCommand(argv: string[], out: (s: string) => void): Promise<number> {
  const { values, positionals } = parse(argv, { ...OPTICS_OPTIONS, step: { type: 'string' } }, 'focus-pair');
  if (values.help) { out(HELP_FOCUS_PAIR); return 0; }
  if (positionals.length !== 2) throw usage('focus-pair: give two frames, NEAR and FAR (see skyloupe focus-pair --help)');
  const step = values.step === undefined ? undefined : Number(values.step);
  if (step === undefined || !Number.isFinite(step) || step === 0) throw usage('focus-pair: --step UM is needed: the focus step between the frames in micrometres (non-zero)');
  const ids: FrameIdentity[] = [];
  const [near, far] = await analyzeAll(positionals, userOptics(values, 'focus-pair'), (frame, _a, k) => { ids[k] = identityOf(frame); });
  const r = runFocusPair(near, far, step, { near: positionals[0], far: positionals[1] }, { near: ids[0], far: ids[1] });
  await emit(values, r, formatFocusPair(r), positionals, out);
  return 0;
}
