/** The side panel (summary, selected star) and the optics form above the views. */
import { summaryHtml, stampSvg, esc, num } from '../../core/report/svg/index.ts';
import { $, setMarkup } from './dom.ts';
import { state, theme } from './state.ts';
import { cameraWords, matchedBySizeAlone } from './optics-panel.ts';

export function renderSummary(): void {
  const r = state.current;
  const el = $('#summary');
  if (!r) { setMarkup(el, '<p class="muted">Drop a frame anywhere, or open one. The demo frame shows what skyloupe finds.</p>'); return; }
  const findings = r.report.findings;
  const counts = findings ? `${findings.length} finding${findings.length === 1 ? '' : 's'} (${findings.filter((f) => f.severity === 'major').length} to act on)` : 'no diagnosis';
  const from = matchedBySizeAlone(r)
    ? `<p class="optics-note" data-by-size="true">Optics remembered for another frame of this size were used: the file names no camera, so the match is by frame size alone. <button type="button" class="link" data-action="optics">Check the optics</button></p>`
    : r.opticsFrom === 'remembered' ? `<p class="muted optics-note">Optics remembered for ${esc(cameraWords(r))} were used. <button type="button" class="link" data-action="optics">Optics</button></p>` : '';
  setMarkup(el, `<h2>Summary</h2>${summaryHtml(r.report)}<p class="findings-count" data-count="${findings?.length ?? 0}">${counts}</p>${from}`);
}

export async function renderStar(): Promise<void> {
  const el = $('#star-panel');
  const r = state.current;
  if (!r || state.selected === null) { setMarkup(el, r ? '<p class="muted">Click a star in the sky (or press ] ) for its numbers and its pixels.</p>' : ''); return; }
  const i = state.selected;
  const s = r.report.stars[i];
  const plate = r.report.frame.optics.plateScaleArcsecPerPx;
  const rows: [string, string][] = [
    ['Position', `${num(s.x, 1)}, ${num(s.y, 1)} px`],
    ['FWHM', `${num(s.fwhmPx)} ± ${num(s.err.fwhmPx)} px${plate ? ` · ${num(s.fwhmPx * plate)}″` : ''}`],
    ['Axes', `${num(s.fwhmMajorPx)} × ${num(s.fwhmMinorPx)} px`],
    ['Ellipticity', `${num(s.ellipticity, 3)} ± ${num(s.err.ellipticity, 3)}`],
    ['Long axis', `${num(s.thetaDeg, 1)}°`],
    ['HFD', `${num(s.hfdPx)} px`],
    ['SNR', num(s.snr, 0)],
    ['Model', s.model + (s.moffatBeta !== null ? ` (β ${num(s.moffatBeta)})` : '')],
    ['Flags', s.flags.length ? s.flags.join(', ') : 'none'],
  ];
  const table = '<table class="star-table"><tbody>' + rows.map(([k, v]) => `<tr><th scope="row">${k}</th><td>${esc(v)}</td></tr>`).join('') + '</tbody></table>';
  setMarkup(el, `<h2>Star ${i + 1}</h2>${table}<div id="stamp" class="stamp" aria-label="Pixels of the star">…</div>`);
  const st = await state.bridge.stamp(r.id, i);
  if (state.selected !== i) return;
  setMarkup($('#stamp'), st.ok ? stampSvg(st.value, { theme: theme(), size: 220 }) : `<p class="muted">${esc(st.message)}</p>`);
}

/** Mark star i in the Sky view (if shown) and show its numbers. */
export function selectStar(i: number | null): void {
  state.selected = i;
  const svg = document.querySelector('#view svg#sky-svg');
  if (svg) {
    svg.querySelector('circle.selected')?.remove();
    const r = state.current;
    if (r && i !== null) {
      const src = svg.querySelector(`circle[data-star="${i}"]`);
      if (src) {
        const c = document.createElementNS('http://www.w3.org/2000/svg', 'circle');
        c.setAttribute('class', 'selected');
        c.setAttribute('cx', src.getAttribute('cx') ?? '0');
        c.setAttribute('cy', src.getAttribute('cy') ?? '0');
        c.setAttribute('r', String(2 * Number(src.getAttribute('r') ?? 5)));
        c.setAttribute('fill', 'none');
        c.setAttribute('stroke', theme().selected);
        c.setAttribute('stroke-width', '2.5');
        c.setAttribute('vector-effect', 'non-scaling-stroke');
        svg.querySelector('g.zoom-layer')?.append(c);
      }
    }
  }
  void renderStar();
}
