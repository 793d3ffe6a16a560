/** Sky: the frame's picture with the measured stars marked; zoom, pan and pick a star. */
import { select } from 'd3-selection';
import { zoom, zoomIdentity, type ZoomTransform } from 'd3-zoom';
import { skySvg, labelledMatches } from '../../../core/report/svg/index.ts';
import type { Report } from '../../../core/report/types.ts';
import type { Theme } from '../../../core/report/svg/index.ts';
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
  const solved = !!r.report.astrometry?.solved && r.report.astrometry.matches.length > 0;
  const labels = button('btn-sky-labels', 'Catalogue names', solved ? 'Label the stars matched to the catalogue (L)' : 'The frame was not placed on the sky: no catalogue stars to label', {
    'aria-pressed': String(solved && ctx.state.skyLabels), disabled: !solved,
  });
  labels.addEventListener('click', () => toggleLabels(ctx));
  el.append(toolbar(zoomIn, zoomOut, zoomReset, labels, h('span', { class: 'muted', id: 'sky-note' }, `${r.report.summary.stars} clean of ${counts} measured stars · click a star for its numbers · wheel or +/− to zoom, drag to pan`)));
  const holder = h('div', { class: 'figure sky-figure' });
  setMarkup(holder, skySvg(r.report, { theme: ctx.theme(), preview: r.preview, width: w, labels: solved && ctx.state.skyLabels }));
  el.append(holder);
  el.append(legend(r.report, solved && ctx.state.skyLabels, ctx.theme()));
  const svg = holder.querySelector('svg') as SVGSVGElement;
  svg.removeAttribute('height');
  svg.setAttribute('width', '100%');
  const layer = select(svg).select<SVGGElement>('g.zoom-layer');
  const z = zoom<SVGSVGElement, unknown>().scaleExtent([1, 64])
    .extent([[0, 0], [r.report.frame.width, r.report.frame.height]])
    .translateExtent([[0, 0], [r.report.frame.width, r.report.frame.height]])
    .on('zoom', (ev: { transform: ZoomTransform }) => { ctx.state.zoomT = ev.transform; layer.attr('transform', ev.transform.toString()); });
  select(svg).call(z).call(z.transform, ctx.state.zoomT);
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

/** Show or hide the catalogue names (button and key L). */
export function toggleLabels(ctx: ViewContext): void {
  if (!ctx.state.current?.report.astrometry?.solved) return;
  ctx.state.skyLabels = !ctx.state.skyLabels;
  ctx.rerender();
}

/** What the marks mean; only the kinds this frame has (the dashed circle only for an image disc). */
function legend(report: Report, labelled: boolean, theme: Theme): HTMLElement {
  const stars = report.stars;
  const saturated = stars.filter((s) => s.flags.includes('saturated')).length;
  const setAside = stars.filter((s) => s.flags.length > 0 && !s.flags.includes('saturated')).length;
  // each mark drawn as the figure draws it, in the theme's colours
  const marks: Record<string, string> = {
    clean: `<circle cx="8" cy="8" r="5" fill="none" stroke="${theme.star}" stroke-width="1.2"/>`,
    flagged: `<circle cx="8" cy="8" r="3.5" fill="none" stroke="${theme.flagged}" stroke-width="1" stroke-dasharray="3 2"/>`,
    saturated: `<g fill="none" stroke="${theme.bad}" stroke-width="1.6"><circle cx="8" cy="8" r="4"/><path d="M0.5,8h2.5M13,8h2.5M8,0.5v2.5M8,13v2.5"/></g>`,
    'region-circle': `<path d="M1,15 A14,14 0 0 1 15,1" fill="none" stroke="${theme.contour}" stroke-width="1.5" stroke-dasharray="4 3"/>`,
    'region-mask': `<rect x="1" y="1" width="14" height="14" fill="${theme.bg}" fill-opacity="0.55" stroke="${theme.contour}" stroke-opacity="0.5"/>`,
    label: `<text x="8" y="12" font-size="11" text-anchor="middle" fill="${theme.fg}">A</text>`,
  };
  const item = (kind: string, label: string) => {
    const mark = h('span', { class: 'legend-mark', 'aria-hidden': 'true' });
    setMarkup(mark, `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 16 16" width="16" height="16">${marks[kind]}</svg>`);
    return h('li', { class: `legend-item legend-${kind}`, 'data-kind': kind }, mark, label);
  };
  const list = h('ul', { id: 'sky-legend', class: 'sky-legend', 'aria-label': 'Marks on the sky' },
    item('clean', `clean star, measured (${report.summary.stars})`));
  if (setAside) list.append(item('flagged', `set aside: blended, faint, at the edge or not a star (${setAside})`));
  if (saturated) list.append(item('saturated', `saturated: its core is clipped, so its size and shape are not measured (${saturated})`));
  const d = report.frame.dataRegion;
  if (d?.kind === 'circle') list.append(item('region-circle', `edge of the image circle: ${Math.round(100 * d.skyFraction)} % of the frame holds sky`));
  if (d?.kind === 'mask') list.append(item('region-mask', `shaded: no sky (${Math.round(100 * (1 - d.skyFraction))} % of the frame)`));
  if (labelled) list.append(item('label', `catalogue name or number of the ${labelledMatches(report, 300).length} brightest matched stars`));
  return list;
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
