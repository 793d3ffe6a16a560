/** Corners: close-ups of the four corners around the centre. */
import { cornersSvg } from '../../../core/report/svg/index.ts';
import { $, h, setMarkup } from '../dom.ts';
import { figureWidth, fitFigure, needFrame } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

function render(el: HTMLElement, ctx: ViewContext): void {
  const { state } = ctx;
  if (!needFrame(el, state)) return;
  const holder = h('div', { class: 'figure corners-figure' });
  const rem = parseFloat(getComputedStyle(document.documentElement).fontSize) || 16;
  setMarkup(holder, cornersSvg(state.current!.report, state.current!.tiles, { theme: ctx.theme(), width: figureWidth(), maxHeight: (($('#view').clientHeight - 24) * 16) / rem }));
  fitFigure(holder);
  el.append(holder);
}

export const cornersView: View = { name: 'corners', label: 'Corners', key: '5', render };
