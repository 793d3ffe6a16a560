/**
 * Distortion: what the lens does to geometry, from the plate solution (report.astrometry). A
 * square grid as the lens draws it and the measured shift of every matched star, both
 * exaggerated by one stated factor (core/report/svg/distortion.ts); the pattern, the percent at
 * the corners and edges, the measured focal length and the projection in words; the plate
 * solution's table. A frame not placed on the sky says so, and why.
 */
import { astrometryTableHtml, distortionFigureData, distortionSvg, num, pm } from '../../../core/report/svg/index.ts';
import type { Report } from '../../../core/report/types.ts';
import { h, setMarkup } from '../dom.ts';
import { pageMessage } from '../finding-words.ts';
import { figureWidth, fitFigure, needFrame } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

const PROJECTION_WORDS: Record<string, string> = {
  rectilinear: 'rectilinear (straight lines stay straight: an ordinary lens)',
  'fisheye-equidistant': 'fisheye, equidistant (image radius grows with the angle)',
  'fisheye-equisolid': 'fisheye, equisolid-angle (equal sky areas, equal image areas)',
  'fisheye-stereographic': 'fisheye, stereographic (shapes kept, areas grow outward)',
};

const PATTERN_WORDS: Record<string, string> = {
  barrel: 'Barrel distortion: the image is squeezed toward the corners, straight lines near the edges bow outward',
  pincushion: 'Pincushion distortion: the image is stretched toward the corners, straight lines near the edges bow inward',
  mustache: 'Mustache distortion: the magnification turns inside the frame, lines bow one way near the centre and the other way near the edges',
  none: 'No significant distortion',
};

/** Signed, as the command line prints it: barrel is negative, pincushion positive. */
const signed = (v: number, err: number | null, d: number) => `${v > 0 ? '+' : ''}${pm(v, err, d)}`;

/**
 * A value with its error to two significant digits; the value to the error's decimals but no
 * more than the report keeps (2), so no digits are invented.
 */
function withErr(v: number, e: number | null): string {
  if (e === null || !Number.isFinite(e) || e <= 0) return num(v, 2);
  const dd = Math.max(0, Math.min(2, 1 - Math.floor(Math.log10(e))));
  return `${v.toFixed(dd).replace('-', '−')} ± ${e.toPrecision(2)}`;
}

/** The distortion in one paragraph (numbers as in the report; the finding says what it means). */
export function distortionWords(report: Report): string {
  const a = report.astrometry!;
  const d = a.distortion;
  const parts: string[] = [];
  if (d) {
    parts.push(`${PATTERN_WORDS[d.pattern] ?? d.pattern}: ${signed(d.cornerPercent, d.cornerPercentErr ?? null, 2)} % at the corners, ${signed(d.edgePercent.x, null, 2)} % at the left and right edges and ${signed(d.edgePercent.y, null, 2)} % at the top and bottom; stars lie up to ${num(d.maxShiftPx, 1)} px from where a distortion-free lens would put them.`);
  } else {
    parts.push('No distortion fitted (too few matched stars across the frame).');
  }
  parts.push(a.focalLengthMm !== null
    ? `Focal length measured from the stars: ${withErr(a.focalLengthMm, a.focalLengthErrMm)} mm.`
    : 'Focal length: the pixel size is needed to turn the measured sky scale into millimetres.');
  if (a.projection) parts.push(`Projection: ${PROJECTION_WORDS[a.projection] ?? a.projection}.`);
  parts.push(`${a.starsMatched} stars matched to ${a.catalogue.name}.`);
  return parts.join(' ');
}

function render(el: HTMLElement, ctx: ViewContext): void {
  if (!needFrame(el, ctx.state)) return;
  const report = ctx.state.current!.report;
  const a = report.astrometry;
  const box = h('div', { class: 'distortion-view' });
  el.append(box);
  if (!a) {
    box.append(h('p', { id: 'distortion-status', 'data-solved': 'false', class: 'distortion-unsolved' }, 'Not placed on the sky: plate solving was skipped for this frame, so its distortion is unknown.'));
    return;
  }
  if (!a.solved) {
    box.append(
      h('p', { id: 'distortion-status', 'data-solved': 'false', class: 'distortion-unsolved' }, `Not placed on the sky: ${a.reason ?? 'no match to the catalogue'}.`),
      h('p', { class: 'muted' }, 'Distortion is measured against where the catalogue puts the stars, so a frame that is not placed has no distortion to show. A correct focal length and pixel size (the optics fields) narrow the search; too few stars or a frame that is not of the night sky cannot be placed.'));
    return;
  }
  const fig = distortionFigureData(report);
  box.append(h('p', { id: 'distortion-status', 'data-solved': 'true', 'data-pattern': a.distortion?.pattern ?? '', class: 'distortion-words' }, distortionWords(report)));
  if (fig) {
    box.append(h('p', { id: 'distortion-factor', class: 'muted', 'data-exaggeration': String(fig.exaggeration) },
      `The lines show a square grid as this lens draws it, the arrows the measured shift of each matched star; every shift is drawn ${fig.exaggeration}× larger than it is. The small ring marks the optical centre.`));
  }
  const holder = h('div', { class: 'figure distortion-figure' });
  setMarkup(holder, distortionSvg(fig, { theme: ctx.theme(), width: Math.min(figureWidth(), 1400), legend: false }));
  fitFigure(holder);
  box.append(holder);
  const meaning = (report.findings ?? []).find((f) => f.code === 'DISTORTION');
  if (meaning) box.append(h('p', { class: 'distortion-meaning' }, pageMessage(meaning.message)));
  const table = h('div', { class: 'astrometry-table' });
  setMarkup(table, astrometryTableHtml(report));
  box.append(h('h2', {}, 'Where the frame is on the sky'), table);
}

export const distortionView: View = { name: 'distortion', label: 'Distortion', key: 'g', render };
