/** Sky: the frame's picture with the measured stars marked; zoom, pan and pick a star. */
import { select } from 'd3-selection';
import { zoom, zoomIdentity, type ZoomTransform } from 'd3-zoom';
import { skyKey, skySvg } from '../../../core/report/svg/index.ts';
import { h, setMarkup } from '../dom.ts';
import { state } from '../state.ts';
import { button, figureWidth, needFrame, toolbar } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

function render(el: HTMLElement, ctx: ViewContext): void {
  if (!needFrame(el, ctx.state)) return;
  const r = ctx.state.current!;
  const w = figureWidth();
  const zoomIn = button('btn-zoom-in', '+', 'Zoom in (+)');
  const zoomOut = button('btn-zoom-out', '−', 'Zoom out (−)');
  const zoomReset = button('btn-zoom-reset', 'Fit', 'Whole frame (0)');
  const counts = r.report.stars.length;
  el.append(toolbar(zoomIn, zoomOut, zoomReset, h('span', { class: 'muted', id: 'sky-note' }, `${r.report.summary.stars} clean of ${counts} measured stars · click a star for its numbers · wheel or +/− to zoom, drag to pan`)));
  const holder = h('div', { class: 'figure sky-figure' });
  setMarkup(holder, skySvg(r.report, { theme: ctx.theme(), preview: r.preview, width: w }));
  el.append(holder);
  const svg = holder.querySelector('svg') as SVGSVGElement;
  svg.removeAttribute('height');
  svg.setAttribute('width', '100%');
  const layer = select(svg).select<SVGGElement>('g.zoom-layer');
  const z = zoom<SVGSVGElement, unknown>().scaleExtent([1, 64])
    .extent([[0, 0], [r.report.frame.width, r.report.frame.height]])
    .translateExtent([[0, 0], [r.report.frame.width, r.report.frame.height]])
    .on('zoom', (ev: { transform: ZoomTransform }) => {
      const k0 = ctx.state.zoomT.k;
      ctx.state.zoomT = ev.transform;
      layer.attr('transform', ev.transform.toString());
      if (ev.transform.k !== k0) redrawKey(svg, ctx, r.report.frame.width / w, ev.transform.k);
    });
  select(svg).call(z).call(z.transform, ctx.state.zoomT);
  redrawKey(svg, ctx, r.report.frame.width / w, ctx.state.zoomT.k);
  ctx.state.zoomer = z;
  zoomIn.addEventListener('click', () => zoomBy(2));
  zoomOut.addEventListener('click', () => zoomBy(0.5));
  zoomReset.addEventListener('click', () => zoomTo(zoomIdentity));
  svg.addEventListener('click', (ev) => {
    const pt = svg.createSVGPoint();
    pt.x = ev.clientX;
    pt.y = ev.clientY;
    const ctm = (svg.querySelector('g.zoom-layer') as SVGGElement).getScreenCTM();
    if (!ctm) return;
    const p = pt.matrixTransform(ctm.inverse());
    // nearest marked star within 12 screen px
    const tol = 12 / (ctm.a || 1);
    let best = -1;
    let bestD = tol;
    for (const c of svg.querySelectorAll<SVGCircleElement>('circle[data-star]')) {
      const d = Math.hypot(Number(c.getAttribute('cx')) - p.x, Number(c.getAttribute('cy')) - p.y);
      if (d < bestD) { bestD = d; best = Number(c.dataset.star); }
    }
    if (best >= 0) ctx.selectStar(best);
  });
  if (ctx.state.selected !== null) ctx.selectStar(ctx.state.selected);
}

/** The key's scale bar follows the zoom (u: figure units per screen px at zoom 1). */
function redrawKey(svg: SVGSVGElement, ctx: ViewContext, u: number, k: number): void {
  const old = svg.querySelector('g.sky-key');
  if (!old || !ctx.state.current) return;
  old.insertAdjacentHTML('afterend', skyKey(ctx.state.current.report, ctx.theme(), u, k));
  old.remove();
}

function skyElement(): SVGSVGElement | null {
  return document.querySelector<SVGSVGElement>('#view svg#sky-svg');
}

export function zoomBy(k: number): void {
  const svg = skyElement();
  if (svg && state.zoomer) select(svg).call(state.zoomer.scaleBy, k);
}

export function zoomTo(t: ZoomTransform): void {
  const svg = skyElement();
  if (svg && state.zoomer) select(svg).call(state.zoomer.transform, t);
}

export function zoomReset(): void {
  zoomTo(zoomIdentity);
}

export function panBy(dx: number, dy: number): void {
  const svg = skyElement();
  if (svg && state.zoomer && state.current) {
    const step = state.current.report.frame.width / 10 / state.zoomT.k;
    select(svg).call(state.zoomer.translateBy, dx * step, dy * step);
  }
}

export const skyView: View = { name: 'sky', label: 'Sky', key: '1', render };
