/** Size map: a smooth map of FWHM (px or arcsec) or ellipticity with contours. */
import { sizeSvg, type SizeQuantity } from '../../../core/report/svg/index.ts';
import { h, setMarkup } from '../dom.ts';
import { figureWidth, fitFigure, needFrame, radios, toolbar } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

function render(el: HTMLElement, ctx: ViewContext): void {
  const { state } = ctx;
  if (!needFrame(el, state)) return;
  el.append(toolbar(radios('size-q', [['fwhmPx', 'FWHM (px)'], ['fwhmArcsec', 'FWHM (arcsec)'], ['ellipticity', 'Ellipticity']], state.sizeQuantity, (v) => { state.sizeQuantity = v as SizeQuantity; ctx.rerender(); })));
  const holder = h('div', { class: 'figure' });
  setMarkup(holder, sizeSvg(state.current!.report, { theme: ctx.theme(), quantity: state.sizeQuantity, width: figureWidth() }));
  fitFigure(holder);
  el.append(holder);
}

export const sizeView: View = { name: 'size', label: 'Size map', key: '3', render };
