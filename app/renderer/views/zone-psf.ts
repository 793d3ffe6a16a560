/**
 * Stacked stars: each zone's clean stars aligned and averaged (report.zonePsf), laid out as the
 * zones lie in the frame; a click (or Enter) on a zone lists the stars in its stack, and a click
 * on one of them shows its numbers and pixels in the side panel.
 */
import { esc, num, zonePsfOf, zonePsfSvg } from '../../../core/report/svg/index.ts';
import { $, h, setMarkup } from '../dom.ts';
import { figureWidth, fitFigure, needFrame } from '../widgets.ts';
import type { View, ViewContext } from '../context.ts';

/** The zone whose stars are listed (kept while the view is drawn again). */
let openZone: string | null = null;
/** At most this many member rows (the stack's highest-SNR stars come first). */
const MAX_ROWS = 200;

function members(el: HTMLElement, ctx: ViewContext): void {
  const r = ctx.state.current!;
  const zp = zonePsfOf(r.report);
  const z = zp?.zones.find((q) => q.name === openZone);
  const box = $('#zone-members');
  if (!z) { setMarkup(box, '<p class="muted">Click a zone to list the stars in its stack.</p>'); return; }
  const rows = z.members.slice(0, MAX_ROWS).map((i) => {
    const s = r.report.stars[i];
    return `<tr data-star="${i}" tabindex="0"><td>${i + 1}</td><td>${num(s.x, 1)}, ${num(s.y, 1)}</td><td>${num(s.fwhmPx, 2)}</td><td>${num(s.hfdPx, 2)}</td><td>${num(s.ellipticity, 3)}</td><td>${num(s.snr, 0)}</td></tr>`;
  }).join('');
  const more = z.members.length > MAX_ROWS ? `<p class="muted">The first ${MAX_ROWS} of ${z.members.length} stars, highest SNR first.</p>` : '';
  setMarkup(box, `<h3>${esc(z.name)}: ${z.stacked} stars in the stack${z.clean > z.stacked ? ` (of ${z.clean} clean; the ${z.stacked} with the highest SNR)` : ''}</h3>`
    + `<table class="zone-members" data-zone="${esc(z.name)}"><thead><tr><th>Star</th><th>Position (px)</th><th>FWHM (px)</th><th>HFD (px)</th><th>Ellipticity</th><th>SNR</th></tr></thead><tbody>${rows}</tbody></table>${more}`);
  const pick = (t: EventTarget | null) => {
    const tr = (t as HTMLElement | null)?.closest<HTMLElement>('tr[data-star]');
    if (tr) ctx.selectStar(Number(tr.dataset.star));
  };
  box.addEventListener('click', (ev) => pick(ev.target));
  box.addEventListener('keydown', (ev) => { if (ev.key === 'Enter') pick(ev.target); });
  void el;
}

function render(el: HTMLElement, ctx: ViewContext): void {
  if (!needFrame(el, ctx.state)) return;
  const holder = h('div', { class: 'figure zone-psf-figure' });
  const rem = parseFloat(getComputedStyle(document.documentElement).fontSize) || 16;
  const maxHeight = (($('#view').clientHeight - 24) * 16) / rem;
  setMarkup(holder, zonePsfSvg(ctx.state.current!.report, { theme: ctx.theme(), interactive: true, width: Math.min(figureWidth(), 1100), maxHeight: Math.max(480, maxHeight) }));
  fitFigure(holder);
  el.append(holder, h('div', { id: 'zone-members', class: 'zone-members-panel', 'aria-live': 'polite' }));
  const open = (g: Element | null) => {
    const name = g?.getAttribute('data-zone');
    if (!name) return;
    openZone = name;
    for (const o of holder.querySelectorAll('g.zone-psf')) o.setAttribute('aria-pressed', String(o === g));
    members(el, ctx);
    $('#zone-members').scrollIntoView({ block: 'nearest' });
  };
  holder.addEventListener('click', (ev) => open((ev.target as Element).closest('g.zone-psf')));
  holder.addEventListener('keydown', (ev) => { if (ev.key === 'Enter' || ev.key === ' ') { ev.preventDefault(); open((ev.target as Element).closest('g.zone-psf')); } });
  if (openZone) holder.querySelector(`g.zone-psf[data-zone="${CSS.escape(openZone)}"]`)?.setAttribute('aria-pressed', 'true');
  members(el, ctx);
}

export const zonePsfView: View = { name: 'stacks', label: 'Stacked stars', key: '5', render };
