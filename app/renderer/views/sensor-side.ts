/** Sensor tilt (the sensor seen edge-on): the sensor seen from the side in two cuts, against best focus, and what to turn. */
import { sensorSideSvg } from '../../../core/report/svg/index.ts';
import { h, setMarkup } from '../dom.ts';
import { figureWidth, fitFigure, needFrame } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

function render(el: HTMLElement, ctx: ViewContext): void {
  if (!needFrame(el, ctx.state)) return;
  const holder = h('div', { class: 'figure sensor-side-figure' });
  setMarkup(holder, sensorSideSvg(ctx.state.current!.report, { theme: ctx.theme(), width: Math.min(figureWidth(), 1200) }));
  fitFigure(holder);
  el.append(holder);
}

export const sensorSideView: View = { name: 'sensor', label: 'Sensor tilt', key: '4', render };
