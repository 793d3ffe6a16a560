/** Focus plane: the focus error at the corners and the tilt of the sensor. */
import { focusSvg } from '../../../core/report/svg/index.ts';
import { h, setMarkup } from '../dom.ts';
import { figureWidth, fitFigure, needFrame } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

function render(el: HTMLElement, ctx: ViewContext): void {
  if (!needFrame(el, ctx.state)) return;
  const holder = h('div', { class: 'figure' });
  setMarkup(holder, focusSvg(ctx.state.current!.report, { theme: ctx.theme(), width: figureWidth() }));
  fitFigure(holder);
  el.append(holder);
}

export const focusView: View = { name: 'focus', label: 'Focus plane', key: '4', render };
