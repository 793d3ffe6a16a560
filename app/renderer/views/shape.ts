/** Shape map: the shape of the stars across the field, per zone or per star. */
import { shapeSvg } from '../../../core/report/svg/index.ts';
import { h, setMarkup } from '../dom.ts';
import { figureWidth, fitFigure, needFrame, radios, toolbar } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

function render(el: HTMLElement, ctx: ViewContext): void {
  const { state } = ctx;
  if (!needFrame(el, state)) return;
  el.append(toolbar(radios('shape-mode', [['zones', 'per zone'], ['stars', 'per star']], state.shapeMode, (v) => { state.shapeMode = v as 'zones' | 'stars'; ctx.rerender(); })));
  const holder = h('div', { class: 'figure' });
  setMarkup(holder, shapeSvg(state.current!.report, { theme: ctx.theme(), width: figureWidth(), mode: state.shapeMode }));
  fitFigure(holder);
  el.append(holder);
}

export const shapeView: View = { name: 'shape', label: 'Shape map', key: '2', render };
