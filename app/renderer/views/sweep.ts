/** Spacer sweep: frames at several spacer distances, and the best distance. */
import { sweepSvg } from '../../../core/report/svg/index.ts';
import { h, setMarkup } from '../dom.ts';
import { spacingFromName } from '../names.ts';
import { ACCEPT, button, figureWidth, fileFrom, fitFigure, toolbar } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

function render(el: HTMLElement, ctx: ViewContext): void {
  const { state } = ctx;
  const input = h('input', { type: 'file', accept: ACCEPT, id: 'sweep-input', multiple: true, hidden: true, 'aria-label': 'Sweep frames' });
  const add = button('btn-sweep-add', 'Add frames…', 'Add frames taken at different spacer distances');
  const fit = button('btn-sweep-fit', 'Find best spacing', 'Fit the metric against spacer distance', { disabled: state.sweep.rows.filter((r) => r.spacingMm !== null).length < 2 });
  const clear = button('btn-sweep-clear', 'Clear', 'Remove all sweep frames', { disabled: state.sweep.rows.length === 0 });
  add.addEventListener('click', () => input.click());
  input.addEventListener('change', async () => {
    for (const f of Array.from(input.files ?? [])) {
      const r = await ctx.analyse({ kind: 'file', file: await fileFrom(f) });
      if (r) state.sweep.rows.push({ result: r, spacingMm: spacingFromName(f.name) });
    }
    state.sweep.result = null;
    ctx.rerender();
  });
  fit.addEventListener('click', async () => {
    const points = state.sweep.rows.filter((r) => r.spacingMm !== null).map((r) => ({ id: r.result.id, spacingMm: r.spacingMm as number }));
    const o = await ctx.bridge.sweep(points);
    if (!o.ok) { ctx.showMessage(ctx.failureText(o)); return; }
    state.sweep.result = o.value;
    ctx.rerender();
  });
  clear.addEventListener('click', () => { state.sweep = { rows: [], result: null }; ctx.rerender(); });
  el.append(toolbar(add, fit, clear, input, h('span', { class: 'muted' }, 'Frames at several spacer distances (a number followed by "mm" in the file name fills the distance in).')));
  const list = h('table', { class: 'sweep-rows' }, h('thead', {}, h('tr', {}, h('th', {}, 'Frame'), h('th', {}, 'Spacer (mm)'), h('th', {}, 'Stars'))));
  const body = h('tbody');
  state.sweep.rows.forEach((row, k) => {
    const inp = h('input', { type: 'number', step: 'any', value: row.spacingMm ?? '', 'aria-label': `Spacer distance of ${row.result.name}`, class: 'sweep-mm', 'data-row': k });
    inp.addEventListener('change', () => { const v = inp.valueAsNumber; row.spacingMm = Number.isFinite(v) ? v : null; state.sweep.result = null; ctx.rerender(); });
    body.append(h('tr', {}, h('td', {}, row.result.name), h('td', {}, inp), h('td', {}, String(row.result.report.summary.stars))));
  });
  list.append(body);
  if (state.sweep.rows.length) el.append(list);
  const res = state.sweep.result;
  if (res) {
    el.append(h('p', { id: 'sweep-best', class: 'sweep-best' }, res.bestSpacingMm === null
      ? `No best spacing found. ${res.note}`
      : `Best spacer distance: ${res.bestSpacingMm.toFixed(2)} mm${res.uncertaintyMm !== null ? ` ± ${res.uncertaintyMm.toFixed(2)} mm` : ''} (${res.evidence === 'minimum' ? 'smallest corner stars' : 'where the corner pattern changes orientation'}, ${res.points.length} frames).`));
    const holder = h('div', { class: 'figure sweep-figure' });
    setMarkup(holder, sweepSvg(res, { theme: ctx.theme(), width: Math.min(figureWidth(), 960) }));
    fitFigure(holder);
    el.append(holder);
  }
}

export const sweepView: View = { name: 'sweep', label: 'Spacer sweep', key: '8', render };
