/**
 * Focus pair: two frames of one field a known focus step apart settle which side of the sensor
 * is too close to the lens (core/series/focus-pair.ts, optics.md section 4). A single frame
 * gives the tilt's size only; its Findings send the user here.
 */
import { esc, findingsHtml, num, pm, sensorSideSvg } from '../../../core/report/svg/index.ts';
import type { AnalysisResult, FocusPairResult } from '../../preload/bridge.ts';
import { h, setMarkup } from '../dom.ts';
import { ACCEPT, button, fileFrom, figureWidth, fitFigure, toolbar } from '../widgets.ts';
import { pageFindings } from './findings.ts';
import type { View, ViewContext } from '../context.ts';

const pair = {
  first: null as AnalysisResult | null,
  second: null as AnalysisResult | null,
  stepUm: null as number | null,
  result: null as FocusPairResult | null,
};

function slot(ctx: ViewContext, which: 'first' | 'second', label: string): HTMLElement {
  const res = pair[which];
  const input = h('input', { type: 'file', accept: ACCEPT, id: `pair-${which}-input`, hidden: true, 'aria-label': `${label} frame` });
  const open = button(`btn-pair-${which}-open`, 'Open…', `Open the ${label.toLowerCase()} frame`);
  const cur = button(`btn-pair-${which}-current`, 'Use current', `Use the current frame as the ${label.toLowerCase()} frame`, { disabled: !ctx.state.current });
  const set = (r: AnalysisResult | null) => { pair[which] = r; pair.result = null; ctx.rerender(); };
  open.addEventListener('click', () => input.click());
  input.addEventListener('change', async () => {
    const f = input.files?.[0];
    if (!f) return;
    const r = await ctx.analyse({ kind: 'file', file: await fileFrom(f) });
    if (r) set(r);
  });
  cur.addEventListener('click', () => set(ctx.state.current));
  return h('div', { class: 'slot', id: `pair-slot-${which}` },
    h('strong', {}, `${label} frame: `), h('span', { class: 'slot-name' }, res ? `${res.name} (${res.report.summary.stars} stars)` : 'none yet'), ' ', cur, open, input);
}

function resultTable(r: FocusPairResult): string {
  const t = r.tilt;
  const rows: [string, string][] = [
    ['Focus change across the width', `${pm(t.acrossFrameUm.x, t.acrossFrameErrUm.x, 1)} µm`],
    ['Focus change across the height', `${pm(t.acrossFrameUm.y, t.acrossFrameErrUm.y, 1)} µm`],
    ['Steepest along', `${pm(t.axisDeg, t.axisErrDeg, 0)}°`],
    ...(t.tiltMrad !== null ? [['Tilt angle', `${pm(t.tiltMrad, t.tiltErrMrad, 2)} mrad`] as [string, string]] : []),
    ['Sign settled at', `${num(r.signSignificance, 1)} σ${r.signResolved ? '' : ' (not settled: below 3 σ)'}`],
    ...r.defocus.corners.map((c) => [`Focus error, ${esc(c.name)}`, `${pm(c.defocusUm, c.defocusErrUm, 1)} µm`] as [string, string]),
    ['Focus error, centre', `${pm(r.defocus.centreUm, r.defocus.centreErrUm, 1)} µm`],
    ['Stars used', `${r.starsUsed.near} and ${r.starsUsed.far}`],
  ];
  const body = rows.map(([k, v]) => `<tr><th scope="row">${k}</th><td>${v}</td></tr>`).join('');
  return `<table class="pair-table"><caption>Focus errors of the first frame, µm at the sensor: positive = the sensor lies behind focus (too far from the lens)</caption><tbody>${body}</tbody></table>`;
}

function render(el: HTMLElement, ctx: ViewContext): void {
  el.append(h('p', { class: 'view-intro' },
    'Two frames of the same field, taken a known focus step apart (move only the focuser between them). One frame tells how much the sensor is tilted; the pair also tells which side sits too close to the lens.'));
  el.append(h('div', { class: 'slots' }, slot(ctx, 'first', 'First'), slot(ctx, 'second', 'Second')));
  const step = h('input', { id: 'pair-step', type: 'number', step: 'any', value: pair.stepUm ?? '', 'aria-describedby': 'pair-step-help' });
  step.addEventListener('change', () => { const v = step.valueAsNumber; pair.stepUm = Number.isFinite(v) && v !== 0 ? v : null; pair.result = null; });
  const run = button('btn-pair-run', 'Find the signed tilt', 'Fit both frames together');
  run.addEventListener('click', async () => {
    const v = step.valueAsNumber;
    pair.stepUm = Number.isFinite(v) && v !== 0 ? v : null;
    if (!pair.first || !pair.second) { ctx.showMessage('Choose both frames first.'); return; }
    if (pair.stepUm === null) { ctx.showMessage('Enter the focus step in µm (not zero): how far the focus moved from the first frame to the second.'); step.focus(); return; }
    ctx.showMessage(null);
    const o = await ctx.bridge.focusPair(pair.first.id, pair.second.id, pair.stepUm);
    if (!o.ok) { ctx.showMessage(ctx.failureText(o)); return; }
    pair.result = o.value;
    ctx.rerender();
  });
  el.append(toolbar(
    h('label', { for: 'pair-step' }, 'Focus step, second minus first '), step, h('span', {}, ' µm'), run,
    h('span', { id: 'pair-step-help', class: 'muted' }, 'at the sensor; positive when the sensor sat farther from the lens in the second frame'),
  ));
  const r = pair.result;
  if (!r) return;
  const out = h('div', { class: 'findings-view pair-result', id: 'pair-result', 'data-sign-resolved': String(r.signResolved) });
  setMarkup(out, `<h2>Signed tilt</h2>${findingsHtml(r.findings)}${resultTable(r)}${r.note ? `<p class="muted">Note: ${esc(r.note)}.</p>` : ''}`);
  pageFindings(out, ctx);
  el.append(out);
  // settled: the sensor edge-on with the side in front of focus named (views/sensor-side.ts draws one frame's)
  if (r.signResolved && pair.first) {
    const fig = h('div', { class: 'figure sensor-side-figure' });
    setMarkup(fig, sensorSideSvg(pair.first.report, { theme: ctx.theme(), width: Math.min(figureWidth(), 1200), signed: r.tilt }));
    fitFigure(fig);
    el.append(fig);
  }
}

export const focusPairView: View = { name: 'focuspair', label: 'Focus pair', key: '9', render };
