/**
 * The optics fields above the views: the values in use, where each came from (the file, typed,
 * remembered for a camera, the plate solution), and the way to change or forget them. A file
 * that names no camera is matched to remembered optics by frame size alone; the panel says so.
 */
import type { AnalysisResult, OpticsField } from '../preload/bridge.ts';
import { $ } from './dom.ts';
import { state } from './state.ts';

const FIELDS: { k: OpticsField; input: string }[] = [
  { k: 'focalLengthMm', input: '#in-focal' },
  { k: 'pixelSizeUm', input: '#in-pixel' },
  { k: 'fNumber', input: '#in-fnum' },
];

const WORDS: Record<OpticsField, string> = { focalLengthMm: 'focal length', pixelSizeUm: 'pixel size', fNumber: 'f-number' };

/** How the page names a camera key: a named camera, or the frame size of an unnamed one. */
export function cameraWords(r: Pick<AnalysisResult, 'camera' | 'cameraNamed' | 'report'>): string {
  return r.cameraNamed ? `camera “${r.camera}”` : `frames of ${r.report.frame.width} × ${r.report.frame.height} px from a camera the file does not name`;
}

/** Where one optics value came from, in words. */
export function sourceWords(r: AnalysisResult, k: OpticsField): string {
  const given = r.opticsGiven?.[k];
  if (given === 'typed') return 'typed';
  if (given === 'remembered') return `remembered for ${cameraWords(r)}`;
  const o = r.report.frame.optics;
  const kw = o.source.keywords?.[k];
  switch (o.source[k]) {
    case 'header': return `from the file header${kw ? ` (${kw})` : ''}`;
    case 'exif': return `from the file's EXIF data${kw ? ` (${kw})` : ''}`;
    case 'derived': return 'worked out from the other values';
    case 'plate-solve': return 'from placing the stars on the sky';
    case 'user': return 'given';
    default: return 'unknown';
  }
}

/** Remembered optics were used for a file that names no camera: matched by frame size alone. */
export function matchedBySizeAlone(r: AnalysisResult): boolean {
  return !r.cameraNamed && Object.values(r.opticsGiven ?? {}).includes('remembered');
}

export function renderOptics(open?: boolean): void {
  const r = state.current;
  const form = $('#optics-form') as HTMLFormElement;
  const toggle = $('#btn-optics-panel') as HTMLButtonElement;
  toggle.disabled = !r;
  if (!r) { form.hidden = true; toggle.setAttribute('aria-expanded', 'false'); return; }
  const o = r.report.frame.optics;
  for (const { k, input } of FIELDS) {
    ($(input) as HTMLInputElement).value = o[k] ? String(o[k]) : '';
    const src = $(`#src-${k}`);
    src.textContent = sourceWords(r, k);
    src.dataset.source = r.opticsGiven?.[k] ?? o.source[k] ?? 'unknown';
  }
  let why: string;
  if (r.opticsMissing.length) {
    why = `Optics missing: ${r.opticsMissing.map((k) => WORDS[k]).join(', ')}. Without focal length and pixel size, sizes stay in pixels; without the f-number and pixel size, focus errors cannot be given in µm at the sensor. Enter them to analyse again.`;
  } else if (matchedBySizeAlone(r)) {
    why = `This file names no camera. The optics below were remembered for another frame of the same size (${r.report.frame.width} × ${r.report.frame.height} px) and used here: that match is by frame size alone. Check them: change them and analyse again, or forget them.`;
  } else {
    why = 'The optics in use for this frame and where each value came from. Change a value and analyse again; typed values are remembered for this camera.';
  }
  $('#optics-why').textContent = why;
  $('#optics-camera').textContent = r.rememberedOptics ? `Remembered for ${cameraWords(r)}.` : `Nothing remembered for ${cameraWords(r)}.`;
  ($('#btn-optics-forget') as HTMLButtonElement).hidden = !r.rememberedOptics;
  const show = open ?? (r.opticsMissing.length > 0 || matchedBySizeAlone(r));
  form.hidden = !show;
  form.dataset.bySize = String(matchedBySizeAlone(r));
  toggle.setAttribute('aria-expanded', String(show));
}

/** Show the fields and put the cursor in the first missing one (or the first). */
export function openOptics(): void {
  if (!state.current) return;
  renderOptics(true);
  const first = FIELDS.find(({ k }) => state.current!.opticsMissing.includes(k)) ?? FIELDS[0];
  ($(first.input) as HTMLInputElement).focus();
}

export function toggleOptics(): void {
  const form = $('#optics-form') as HTMLFormElement;
  if (form.hidden) openOptics();
  else { form.hidden = true; $('#btn-optics-panel').setAttribute('aria-expanded', 'false'); }
}
