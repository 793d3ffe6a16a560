/** Compare: two frames side by side, zone by zone, on one scale. */
import { compareTableHtml, sizeSvg, heatGrid, finiteRange, type SizeQuantity } from '../../../core/report/svg/index.ts';
import type { AnalysisResult } from '../../preload/bridge.ts';
import { h, setMarkup } from '../dom.ts';
import { ACCEPT, button, figureWidth, fileFrom, fitFigure } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

/** Put a frame in slot A or B and compare as soon as both are filled. */
export function setCompareFrame(ctx: ViewContext, which: 'a' | 'b', r: AnalysisResult | null): void {
  ctx.state.compare[which] = r;
  ctx.state.compare.result = null;
  ctx.rerender();
  void runCompare(ctx);
}

function slot(ctx: ViewContext, label: string, which: 'a' | 'b'): HTMLElement {
  const res = ctx.state.compare[which];
  const input = h('input', { type: 'file', accept: ACCEPT, id: `compare-${which}-input`, hidden: true, 'aria-label': `Frame ${label}` });
  const open = button(`btn-compare-${which}-open`, 'Open…', `Open frame ${label}`);
  const cur = button(`btn-compare-${which}-current`, 'Use current', `Use the current frame as ${label}`, { disabled: !ctx.state.current });
  open.addEventListener('click', () => input.click());
  input.addEventListener('change', async () => {
    const f = input.files?.[0];
    if (!f) return;
    const r = await ctx.analyse({ kind: 'file', file: await fileFrom(f) });
    if (r) setCompareFrame(ctx, which, r);
  });
  cur.addEventListener('click', () => setCompareFrame(ctx, which, ctx.state.current));
  return h('div', { class: 'slot', id: `compare-slot-${which}` },
    h('strong', {}, `Frame ${label}: `), h('span', { class: 'slot-name' }, res ? res.name : 'none yet'), ' ', cur, open, input);
}

async function runCompare(ctx: ViewContext): Promise<void> {
  const { a, b } = ctx.state.compare;
  if (!a || !b || ctx.state.compare.result) return;
  const o = await ctx.bridge.compare(a.id, b.id);
  if (!o.ok) { ctx.showMessage(ctx.failureText(o)); return; }
  ctx.state.compare.result = o.value;
  if (ctx.state.view === 'compare') ctx.rerender();
}

function render(el: HTMLElement, ctx: ViewContext): void {
  el.append(h('div', { class: 'slots' }, slot(ctx, 'A', 'a'), slot(ctx, 'B', 'b')));
  const c = ctx.state.compare.result;
  const { a, b } = ctx.state.compare;
  if (!c || !a || !b) {
    el.append(h('p', { class: 'muted' }, 'Choose two frames: the same scales are used for both, and each zone gets a verdict.'));
    return;
  }
  const table = h('div', { class: 'compare-verdicts' });
  setMarkup(table, compareTableHtml(c));
  el.append(table);
  // one colour range for both maps
  const q: SizeQuantity = c.unit === 'arcsec' ? 'fwhmArcsec' : 'fwhmPx';
  const ranges = [a, b].map((r) => { const g = heatGrid(r.report, q); return g ? finiteRange(g.values) : null; }).filter((x): x is [number, number] => !!x);
  const domain: [number, number] | undefined = ranges.length ? [Math.min(...ranges.map((x) => x[0])), Math.max(...ranges.map((x) => x[1]))] : undefined;
  const w = Math.max(420, Math.floor(figureWidth() / 2) - 8);
  const pair = h('div', { class: 'pair' });
  for (const [r, tag] of [[a, 'A'], [b, 'B']] as const) {
    const holder = h('div', { class: 'figure' });
    setMarkup(holder, sizeSvg(r.report, { theme: ctx.theme(), quantity: q, width: w, domain, id: `cmp-${tag}`, title: `${tag}: ${r.name}` }));
    fitFigure(holder);
    pair.append(holder);
  }
  el.append(pair);
}

export const compareView: View = { name: 'compare', label: 'Compare', key: '7', render };
