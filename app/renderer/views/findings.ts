/** Findings: what the diagnosis found, most important first, in the page's words with its controls. */
import { findingsHtml } from '../../../core/report/svg/index.ts';
import { h, setMarkup } from '../dom.ts';
import { needFrame } from '../widgets.ts';
import { findingActions, pageMessage, unitWords } from '../finding-words.ts';
import type { View, ViewContext } from '../context.ts';

/** Rewrites the shared findings list in place: page wording, and a button for each action asked for. */
export function pageFindings(holder: HTMLElement, ctx: ViewContext): void {
  for (const li of holder.querySelectorAll<HTMLElement>('li.finding')) {
    const msg = li.querySelector<HTMLElement>('.finding-message');
    if (!msg) continue;
    const original = msg.textContent ?? '';
    msg.textContent = pageMessage(original);
    for (const cell of li.querySelectorAll<HTMLElement>('.finding-numbers th, .finding-numbers td')) cell.textContent = unitWords(cell.textContent ?? '');
    const actions = findingActions(li.dataset.code ?? '', original);
    if (!actions.length) continue;
    const bar = h('div', { class: 'finding-actions' });
    for (const a of actions) {
      const b = h('button', { type: 'button', class: 'finding-action', 'data-target': a.target }, a.label);
      b.addEventListener('click', () => {
        if (a.target === 'optics') ctx.openOptics();
        else ctx.switchView(a.target.slice(5));
      });
      bar.append(b);
    }
    msg.after(bar);
  }
}

function render(el: HTMLElement, ctx: ViewContext): void {
  if (!needFrame(el, ctx.state)) return;
  const r = ctx.state.current!;
  const holder = h('div', { class: 'findings-view' });
  setMarkup(holder, `<h2>Findings</h2>${findingsHtml(r.report.findings)}`);
  pageFindings(holder, ctx);
  el.append(holder);
}

export const findingsView: View = { name: 'findings', label: 'Findings', key: '6', render };
