/**
 * Through focus: three or more frames of one field at known focuser positions, analysed in the
 * engine worker as `skyloupe through-focus` does (bridge.throughFocus). Positions are typed (µm
 * at the sensor, or focuser steps times a step size) or read from each FITS header's FOCUSPOS /
 * FOCPOS. Shows the numbers, the findings in words, the focus curves per zone, the best-focus
 * surface and one star's discs across the series (core/report/svg/through-focus.ts).
 */
import {
  focusCurvesData, focusCurvesSvg, focusSurfaceData, focusSurfaceSvg, stampStripData, stampStripSvg, type ThroughFocusLike,
} from '../../../core/report/svg/index.ts';
import { throughFocusSummaryRows } from '../../../core/report/through-focus-html.ts';
import { fitsFocusPosition } from '../../../core/series/focus-position.ts';
import { SEVERITY_WORDS } from '../../../core/series/words.ts';
import type { FocusSeriesResult, FrameFile } from '../../preload/bridge.ts';
import { h, setMarkup } from '../dom.ts';
import { setBusy } from '../messages.ts';
import { pageMessage } from '../finding-words.ts';
import { ACCEPT, button, figureWidth, fileFrom, fitFigure, radios, toolbar } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

interface SeriesRow {
  file: FrameFile;
  /** As typed or read (µm, or steps when the unit is steps); null = not known yet. */
  position: number | null;
  /** 'typed', or the header keyword it came from. */
  from: string;
}

/** The view's own state: the frames chosen, the unit, the last result or error. */
export const series = {
  rows: [] as SeriesRow[],
  unit: 'um' as 'um' | 'steps',
  stepUm: null as number | null,
  fNumber: null as number | null,
  metric: 'hfd' as 'hfd' | 'fwhm' | 'rms',
  result: null as FocusSeriesResult | null,
  error: null as string | null,
};

function changed(): void {
  series.result = null;
  series.error = null;
}

/** Add frames (picked or dropped): positions from their headers where they have one. */
export async function addFrames(files: FrameFile[], ctx: ViewContext): Promise<void> {
  for (const file of files) {
    const head = fitsFocusPosition(new Uint8Array(file.bytes, 0, Math.min(file.bytes.byteLength, 100 * 2880)));
    // header positions count focuser steps (focus-position.ts): offer the step unit
    if (head && series.rows.length === 0) series.unit = 'steps';
    series.rows.push({ file, position: head ? head.value : null, from: head ? head.keyword : 'typed' });
  }
  changed();
  ctx.rerender();
}

async function run(ctx: ViewContext): Promise<void> {
  // too few frames: the engine's answer comes first (two frames: the focus pair)
  if (series.rows.length >= 3 && series.unit === 'steps' && !(series.stepUm && series.stepUm > 0)) {
    series.error = 'Give the size of one focuser step in µm (the positions are counted in steps).';
    ctx.rerender();
    return;
  }
  ctx.showMessage(null);
  setBusy(true);
  try {
    const o = await ctx.bridge.throughFocus({
      // a position from the header goes as null: the engine reads the same card with the full FITS reader and says so
      frames: series.rows.map((r) => ({ name: r.file.name, bytes: r.file.bytes, position: r.from === 'typed' ? r.position : null })),
      stepUnitUm: series.unit === 'steps' ? series.stepUm : null,
      optics: series.fNumber ? { fNumber: series.fNumber } : undefined,
    });
    if (o.ok) { series.result = o.value; series.error = null; } else { series.result = null; series.error = ctx.failureText(o); }
  } finally {
    setBusy(false);
  }
  ctx.rerender();
}

function frameTable(ctx: ViewContext): HTMLElement {
  const unit = series.unit === 'um' ? 'µm' : 'steps';
  const table = h('table', { class: 'series-rows', id: 'series-rows' },
    h('thead', {}, h('tr', {}, h('th', {}, 'Frame'), h('th', {}, `Position (${unit})`), h('th', {}, 'From'), h('th', {}, ''))));
  const body = h('tbody');
  series.rows.forEach((row, k) => {
    const inp = h('input', {
      type: 'number', step: 'any', value: row.position ?? '', class: 'series-pos', 'data-row': k,
      'aria-label': `Focuser position of ${row.file.name}`, placeholder: 'type it',
    });
    inp.addEventListener('change', () => {
      const v = inp.valueAsNumber;
      row.position = Number.isFinite(v) ? v : null;
      row.from = 'typed';
      changed();
      ctx.rerender();
    });
    const drop = button(`btn-series-remove-${k}`, 'Remove', `Leave ${row.file.name} out of the series`);
    drop.addEventListener('click', () => { series.rows.splice(k, 1); changed(); ctx.rerender(); });
    body.append(h('tr', { 'data-row': k },
      h('td', { class: 'name', title: row.file.name }, row.file.name), h('td', {}, inp),
      h('td', { class: 'muted series-from' }, row.from === 'typed' ? (row.position === null ? 'needed' : 'typed') : `header ${row.from}`), h('td', {}, drop)));
  });
  table.append(body);
  return table;
}

function results(el: HTMLElement, ctx: ViewContext, out: FocusSeriesResult): void {
  const r = out.result;
  const like = r as unknown as ThroughFocusLike;
  const theme = ctx.theme();
  const w = Math.min(figureWidth(), 1400);
  const summary = h('table', { class: 'series-summary', id: 'series-summary' });
  const body = h('tbody');
  for (const [k, v] of throughFocusSummaryRows(r)) {
    const td = h('td');
    setMarkup(td, v);
    body.append(h('tr', {}, h('th', { scope: 'row' }, k), td));
  }
  summary.append(body);
  el.append(h('h2', {}, 'The series'), summary);
  const order: Record<string, number> = { major: 0, minor: 1, info: 2 };
  const list = h('ol', { class: 'findings', id: 'series-findings' });
  for (const f of [...r.findings].sort((a, b) => order[a.severity] - order[b.severity])) {
    list.append(h('li', { class: `finding severity-${f.severity}`, 'data-severity': f.severity },
      h('span', { class: 'severity' }, SEVERITY_WORDS[f.severity]), ' ', h('span', { class: 'finding-message' }, pageMessage(f.message))));
  }
  el.append(h('h2', {}, 'Findings'), list);
  el.append(h('h2', {}, 'Focus curves'), toolbar(radios('series-metric', [['hfd', 'HFD'], ['fwhm', 'FWHM'], ['rms', 'rms radius']], series.metric, (v) => {
    series.metric = v as typeof series.metric;
    ctx.rerender();
  })));
  const curves = h('div', { class: 'figure series-curves' });
  setMarkup(curves, focusCurvesSvg(focusCurvesData(like, series.metric), { theme, width: w, id: 'tf-curves' }));
  fitFigure(curves);
  el.append(curves, h('p', { class: 'muted' }, 'Each zone laid out as in the frame: its stars\' size against focuser position, the fitted curve (a defocused cone of light convolved with the in-focus core), the dashed mark at its best focus and the band of the critical focus zone.'));
  const sd = focusSurfaceData(like);
  if (sd) {
    const surf = h('div', { class: 'figure series-surface' });
    setMarkup(surf, focusSurfaceSvg(sd, { theme, width: Math.min(w, 1000), id: 'tf-surface' }));
    fitFigure(surf);
    el.append(h('h2', {}, 'Best focus over the frame'), surf,
      h('p', { class: 'muted' }, 'Best-focus position over the frame (tilt plane plus curvature) with lines of equal focus and each zone\'s own value; open circles lie outside the series and are not fitted.'));
  }
  const strips = r.stamps.map((_, i) => stampStripData(like, i)).filter((d): d is NonNullable<typeof d> => !!d);
  if (strips.length) {
    el.append(h('h2', {}, 'One star through focus'));
    strips.forEach((d, i) => {
      const s = h('div', { class: 'figure series-stamps' });
      setMarkup(s, stampStripSvg(d, { theme, width: w, id: `tf-stamps-${i}` }));
      fitFigure(s);
      el.append(s);
    });
  }
  const frames = h('table', { class: 'series-rows', id: 'series-frames' },
    h('thead', {}, h('tr', {}, h('th', {}, 'Frame'), h('th', {}, 'Position (µm)'), h('th', {}, 'As given'), h('th', {}, 'Stars'), h('th', {}, 'Followed'))));
  const fb = h('tbody');
  r.frames.forEach((f) => {
    const given = out.positions.find((p) => p.name === f.label);
    fb.append(h('tr', {}, h('td', { class: 'name' }, f.label ?? ''), h('td', {}, String(f.positionUm)),
      h('td', {}, given ? `${given.given}${given.from === 'typed' ? '' : ` (${given.from})`}` : ''), h('td', {}, String(f.stars)), h('td', {}, String(f.tracked))));
  });
  frames.append(fb);
  el.append(h('h2', {}, 'Frames'), frames);
}

function render(el: HTMLElement, ctx: ViewContext): void {
  const input = h('input', { type: 'file', accept: ACCEPT, id: 'series-input', multiple: true, hidden: true, 'aria-label': 'Frames of the focus series' });
  const add = button('btn-series-add', 'Add frames…', 'Add frames of one field taken at different focuser positions (or drop them here)');
  const go = button('btn-series-run', 'Find best focus', 'Analyse the series: focus curves, focus surface, tilt, curvature, spherical aberration', {
    // with too few frames the engine says what to do (two frames: the focus pair)
    disabled: series.rows.length === 0 || ctx.state.busy,
  });
  const clear = button('btn-series-clear', 'Clear', 'Remove all frames of the series', { disabled: series.rows.length === 0 });
  add.addEventListener('click', () => input.click());
  input.addEventListener('change', async () => {
    const files = await Promise.all(Array.from(input.files ?? []).map(fileFrom));
    input.value = '';
    await addFrames(files, ctx);
  });
  go.addEventListener('click', () => void run(ctx));
  clear.addEventListener('click', () => { series.rows = []; changed(); ctx.rerender(); });
  el.append(toolbar(add, go, clear, input, h('span', { class: 'muted' },
    'Three or more frames of one field at different focuser positions (five to nine across focus are best); larger positions = sensor farther from the lens.')));

  const step = h('input', { type: 'number', step: 'any', min: '0', id: 'series-step', value: series.stepUm ?? '', 'aria-label': 'Focuser step size in µm', disabled: series.unit !== 'steps' });
  step.addEventListener('change', () => { const v = step.valueAsNumber; series.stepUm = Number.isFinite(v) && v > 0 ? v : null; changed(); ctx.rerender(); });
  const fnum = h('input', { type: 'number', step: 'any', min: '0.5', id: 'series-fnum', value: series.fNumber ?? '', 'aria-label': 'f-number' });
  fnum.addEventListener('change', () => { const v = fnum.valueAsNumber; series.fNumber = Number.isFinite(v) && v > 0 ? v : null; changed(); });
  el.append(h('div', { class: 'series-form' },
    radios('series-unit', [['um', 'positions in µm at the sensor'], ['steps', 'positions in focuser steps']], series.unit, (v) => { series.unit = v as 'um' | 'steps'; changed(); ctx.rerender(); }),
    h('label', {}, 'one step = ', step, ' µm'),
    h('label', { title: 'For the critical focus zone, when the frames do not say' }, 'f/', fnum)));
  if (series.rows.length) el.append(frameTable(ctx));
  else el.append(h('p', { class: 'muted' }, 'No frames yet: add or drop them. A FITS header\'s FOCUSPOS or FOCPOS fills the position in; otherwise type it.'));
  if (series.error) {
    const err = h('p', { id: 'series-error', class: 'series-error message-error', role: 'alert' }, series.error);
    // two frames a known step apart: the page's own control for them
    if (/focus pair/.test(series.error)) {
      const open = button('btn-series-focuspair', 'Open Focus pair', 'Two frames a known focus step apart: the signed tilt');
      open.addEventListener('click', () => ctx.switchView('focuspair'));
      err.append(' ', open);
    }
    el.append(err);
  }
  if (series.result) results(el, ctx, series.result);
}

export const throughFocusView: View = {
  name: 'through-focus', label: 'Through focus', key: 't', render,
  drop: (files, ctx) => addFrames(files, ctx),
};
