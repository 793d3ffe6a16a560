/** Findings: what the diagnosis found, most important first. */
import { findingsHtml } from '../../../core/report/svg/index.ts';
import { h, setMarkup } from '../dom.ts';
import { needFrame } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

function render(el: HTMLElement, ctx: ViewContext): void {
  if (!needFrame(el, ctx.state)) return;
  const r = ctx.state.current!;
  const holder = h('div', { class: 'findings-view' });
  setMarkup(holder, `<h2>Findings</h2>${findingsHtml(r.report.findings)}`);
  el.append(holder);
}

export const findingsView: View = { name: 'findings', label: 'Findings', key: '6', render };
