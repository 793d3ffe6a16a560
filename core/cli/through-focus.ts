/** `skyloupe through-focus --at UM=FRAME ...`: a focus series (core/series/through-focus.ts). */
import path from 'node:path';
import type { Analysis } from '../analyze.ts';
import type { Frame } from '../frame/types.ts';
import { usage } from '../errors.ts';
import { parse, positiveNumber } from './args.ts';
import { frameExtras, type FrameExtras } from '../series/frame-extras.ts';
import type { FrameIdentity } from '../series/input.ts';
import { identityOf } from '../series/identity.ts';
import { runThroughFocus, formatThroughFocus, type ThroughFocusResult } from '../series/through-focus.ts';
import { throughFocusHtml } from '../report/through-focus-html.ts';
import { writeFileAtomic } from '../report/save.ts';
import { SEVERITY_WORDS } from '../series/words.ts';

type Values = Record<string, string | boolean | undefined>;

export interface CliDeps {
  analyzeAll(paths: string[], user: ReturnType<CliDeps['userOptics']>, onFrame?: (frame: Frame, a: Analysis, k: number) => void): Promise<Analysis[]>;
  emit(values: Values, result: unknown, text: string, inputs: string[], out: (s: string) => void): Promise<void>;
  userOptics(values: Values, command: string): { focalLengthMm?: number; pixelSizeUm?: number; fNumber?: number };
  opticsOptions: Record<string, { type: 'string' }>;
  opticsHelp: string;
}

export function helpThroughFocus(opticsHelp: string): string {
  return `usage: skyloupe through-focus --at UM=FRAME --at UM=FRAME --at UM=FRAME ... [options]

Three or more frames of one field at known focuser positions (UM, micrometres of
travel at the sensor; larger = sensor farther from the lens), e.g. --at -60=a.fits
--at -30=b.fits --at 0=c.fits --at 30=d.fits --at 60=e.fits. Five to nine frames
spread over about four critical focus zones on each side of focus work best.
Stars are followed from frame to frame (small shifts are fine). Gives each zone's
best focus, the focus surface (tilt, field curvature, astigmatism), which side of the
sensor must come toward the lens and by how much, the best overall and whole-field
focus, the critical focus zone and the spherical aberration.

options:
  --step-unit UM        the positions are focuser steps of UM micrometres each
  --wavelength NM       wavelength for the critical focus zone (default 550)
  --obstruction RATIO   central obstruction of the optics, diameter ratio (default 0)
  --adjusters DEG,...   tilt-plate adjusters at these angles about the frame centre
                        (pixel axes: degrees from +x toward +y) ...
  --adjuster-radius MM  ... on a circle of this radius (needs the pixel size);
                        without them the moves are given at the frame's corners
  --screw-pitch MM      thread pitch of the adjusters: the moves also in turns
  --html FILE           write a self-contained HTML page with the figures
${opticsHelp}`;
}

/** "12.5" and "-3" as numbers; anything else is a usage error. */
function numberOf(v: string, what: string): number {
  const x = Number(v);
  if (v.trim() === '' || !Number.isFinite(x)) throw usage(`through-focus: ${what} must be a number, got "${v}"`);
  return x;
}

/** `--at -40=a.fits` would read as an option: join each --at with its value first. */
function joinAt(argv: string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    if (argv[i] === '--at' && i + 1 < argv.length) out.push(`--at=${argv[++i]}`);
    else out.push(argv[i]);
  }
  return out;
}

export async function throughFocusCommand(argv: string[], out: (s: string) => void, deps: CliDeps): Promise<number> {
  const { values, positionals } = parse(joinAt(argv), {
    ...deps.opticsOptions,
    at: { type: 'string', multiple: true },
    'step-unit': { type: 'string' },
    wavelength: { type: 'string' },
    obstruction: { type: 'string' },
    adjusters: { type: 'string' },
    'adjuster-radius': { type: 'string' },
    'screw-pitch': { type: 'string' },
    html: { type: 'string' },
  }, 'through-focus');
  if (values.help) { out(helpThroughFocus(deps.opticsHelp)); return 0; }
  if (positionals.length) throw usage(`through-focus: give frames as --at UM=FRAME, not "${positionals[0]}"`);
  const at = (values.at as unknown as string[] | undefined) ?? [];
  if (at.length === 2) throw usage('through-focus: two frames cannot show a focus curve; for two frames a known step apart use focus-pair NEAR FAR --step UM, or add a third frame');
  if (at.length < 3) throw usage('through-focus: give at least three --at UM=FRAME at different focuser positions (five or more across focus are better)');
  const stepUnit = positiveNumber(values['step-unit'], 'step-unit', 'through-focus');
  const items = at.map((spec) => {
    const m = /^\s*([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*=(.+)$/.exec(spec);
    if (!m) throw usage(`through-focus: --at needs UM=FRAME, got "${spec}"`);
    const given = Number(m[1]);
    return { given, positionUm: given * (stepUnit ?? 1), file: m[2] };
  });
  const wavelengthNm = positiveNumber(values.wavelength, 'wavelength', 'through-focus');
  if (wavelengthNm !== undefined && (wavelengthNm < 200 || wavelengthNm > 2000)) throw usage(`through-focus: --wavelength is in nanometres (200 to 2000), got ${wavelengthNm}`);
  let obstruction: number | undefined;
  if (values.obstruction !== undefined) {
    obstruction = numberOf(String(values.obstruction), '--obstruction');
    if (!(obstruction >= 0 && obstruction < 0.95)) throw usage(`through-focus: --obstruction is a diameter ratio from 0 to 0.95, got ${obstruction}`);
  }
  const screwPitchMm = positiveNumber(values['screw-pitch'], 'screw-pitch', 'through-focus');
  const radiusMm = positiveNumber(values['adjuster-radius'], 'adjuster-radius', 'through-focus');
  const angles = values.adjusters === undefined ? null : String(values.adjusters).split(',').map((a) => numberOf(a, 'each --adjusters angle'));
  if ((angles === null) !== (radiusMm === undefined)) throw usage('through-focus: --adjusters and --adjuster-radius go together');
  if (angles && (angles.length < 3 || angles.length > 12)) throw usage('through-focus: --adjusters takes 3 to 12 angles');
  const user = deps.userOptics(values, 'through-focus');
  for (const [opt, target] of [['json', values.json], ['html', values.html]] as const) {
    if (typeof target === 'string' && target !== '-' && items.some((i) => path.resolve(i.file) === path.resolve(target))) {
      throw usage(`through-focus: --${opt} would overwrite an input frame; choose another file`);
    }
  }
  const extras: FrameExtras[] = [];
  const ids: FrameIdentity[] = [];
  const analyses = await deps.analyzeAll(items.map((i) => i.file), user, (frame, a, k) => { extras[k] = frameExtras(frame, a); ids[k] = identityOf(frame); });
  let adjusters: { name: string; xPx: number; yPx: number }[] | null = null;
  if (angles && radiusMm !== undefined) {
    const a0 = analyses[0];
    const p = a0.optics.pixelSizeUm;
    if (!p) throw usage('through-focus: --adjuster-radius needs the pixel size (give --pixel-size)');
    const r = (radiusMm * 1000) / p;
    const cx = (a0.frame.width - 1) / 2, cy = (a0.frame.height - 1) / 2;
    adjusters = angles.map((d) => ({ name: `adjuster at ${d}°`, xPx: cx + r * Math.cos((d * Math.PI) / 180), yPx: cy + r * Math.sin((d * Math.PI) / 180) }));
  }
  const r: ThroughFocusResult = runThroughFocus(items.map((it, k) => ({
    positionUm: it.positionUm, analysis: analyses[k], label: it.file, identity: ids[k], profiles: extras[k].profiles, stamps: extras[k].stamps,
  })), {
    wavelengthNm, obstruction, adjusters, screwPitchMm: screwPitchMm ?? null,
    stepUnitUm: stepUnit ?? null, positionsGiven: stepUnit ? items.map((i) => i.given) : null,
  });
  const text = [formatThroughFocus(r), '', 'Findings:', ...r.findings.map((f) => `  ${SEVERITY_WORDS[f.severity]}: ${f.message}`)].join('\n');
  await deps.emit(values, r, text, items.map((i) => i.file), out);
  if (typeof values.html === 'string') await writeFileAtomic(values.html, throughFocusHtml(r, { name: items.map((i) => path.basename(i.file)).join(', ') }));
  return 0;
}
