/** Figures for several frames: the compare table and the spacer sweep (metric against spacer distance). */
import { QUANTITIES, formatQuantity } from '../words.ts';
import { scaleLinear } from 'd3-scale';
import { line } from 'd3-shape';
import type { CompareResult, SweepResult } from './types.ts';
import type { Theme } from './theme.ts';
import { emptyFigure, esc, num, pm, r2, svgOpen, text } from './util.ts';

const BETTER: Record<string, string> = { A: 'A is better', B: 'B is better', tie: 'no clear difference' };

const ZONE_LABEL: Record<string, string> = { center: 'Centre', edges: 'Edges', corners: 'Corners' };

export function compareTableHtml(c: CompareResult): string {
  const u = c.unit === 'arcsec' ? '″' : ' px';
  const cell = (z: CompareResult['zones'][number]['a']) => `<span class="fwhm">${pm(z.fwhm, z.fwhmErr, 2)}${u}</span> · ${QUANTITIES.sharedEllipticity.label} ${formatQuantity('sharedEllipticity', z.e)} · ${z.stars} stars`;
  const rows = c.zones.map((z) => `<tr data-zone="${esc(z.zone)}" data-better="${esc(z.better)}"><th scope="row">${esc(ZONE_LABEL[z.zone] ?? z.zone)}</th>`
    + `<td>${cell(z.a)}</td><td>${cell(z.b)}</td>`
    + `<td>${z.differencePct === null ? '–' : `${z.differencePct > 0 ? '+' : ''}${pm(z.differencePct, z.differenceErrPct, 1)} %`}</td>`
    + `<td class="verdict verdict-${esc(z.better)}">${esc(BETTER[z.better] ?? z.better)}</td><td class="note">${esc(z.note ?? '')}</td></tr>`).join('');
  const notes = c.notes.map((n) => `<p class="compare-note">${esc(n)}</p>`).join('');
  return `<table class="compare-table"><thead><tr><th>Zone</th><th>A: ${esc(c.a.name)}<br><small>median FWHM · elongation · stars</small></th><th>B: ${esc(c.b.name)}<br><small>median FWHM · elongation · stars</small></th><th>B against A</th><th>Verdict</th><th></th></tr></thead><tbody>${rows}</tbody></table>${notes}`;
}

export function sweepSvg(sw: SweepResult, opts: { theme: Theme; width?: number }): string {
  const { theme } = opts;
  const width = opts.width ?? 800;
  const height = Math.round(width * 0.5);
  const pts = sw.points.filter((p) => p.metric !== null && Number.isFinite(p.metric));
  const label = `Spacer sweep: ${sw.metric}`;
  if (pts.length < 2) return emptyFigure(width, height, label, 'fewer than two frames with a measured value', theme);
  const M = { l: 70, r: 24, t: sw.note ? 62 : 40, b: 52 };
  const xs = pts.map((p) => p.spacingMm);
  const ys = pts.flatMap((p) => [p.metric! - (p.metricErr ?? 0), p.metric! + (p.metricErr ?? 0)]).concat(sw.curve.map((c) => c.metric));
  const xLo = Math.min(...xs, ...(sw.bestSpacingMm !== null ? [sw.bestSpacingMm] : []));
  const xHi = Math.max(...xs, ...(sw.bestSpacingMm !== null ? [sw.bestSpacingMm] : []));
  const padX = (xHi - xLo || 1) * 0.08;
  const x = scaleLinear().domain([xLo - padX, xHi + padX]).range([M.l, width - M.r]);
  const y = scaleLinear().domain([Math.min(...ys), Math.max(...ys)]).nice().range([height - M.b, M.t]);
  let out = svgOpen(width, height, label, theme, 'sweep-svg');
  out = out.replace('<svg ', `<svg data-points="${pts.length}" data-best="${sw.bestSpacingMm ?? ''}" `);
  out += text(10, 22, label, theme, { size: 14, weight: '600' });
  // axes
  out += `<g stroke="${theme.grid}" stroke-width="1">`;
  for (const t of y.ticks(5)) out += `<line x1="${M.l}" x2="${width - M.r}" y1="${r2(y(t))}" y2="${r2(y(t))}"/>`;
  out += '</g>';
  if (sw.signed && y.domain()[0] < 0 && y.domain()[1] > 0) out += `<line class="zero" x1="${M.l}" x2="${width - M.r}" y1="${r2(y(0))}" y2="${r2(y(0))}" stroke="${theme.fg}" stroke-width="1" stroke-dasharray="2 3"/>`;
  for (const t of y.ticks(5)) out += text(M.l - 8, y(t) + 4, y.tickFormat(5)(t), theme, { size: 11, anchor: 'end' });
  for (const t of x.ticks(6)) {
    out += `<line x1="${r2(x(t))}" x2="${r2(x(t))}" y1="${height - M.b}" y2="${height - M.b + 5}" stroke="${theme.fg}"/>`;
    out += text(x(t), height - M.b + 18, x.tickFormat(6)(t), theme, { size: 11, anchor: 'middle' });
  }
  out += `<line x1="${M.l}" x2="${width - M.r}" y1="${height - M.b}" y2="${height - M.b}" stroke="${theme.fg}"/>`;
  out += text((M.l + width - M.r) / 2, height - 10, 'spacer distance (mm)', theme, { size: 12, anchor: 'middle' });
  out += `<text x="16" y="${r2((M.t + height - M.b) / 2)}" font-size="12" fill="${theme.fg}" text-anchor="middle" transform="rotate(-90 16 ${r2((M.t + height - M.b) / 2)})">${esc(`${sw.metric} (${sw.unit})`)}</text>`;
  // best value with its uncertainty band
  if (sw.bestSpacingMm !== null) {
    const bx = x(sw.bestSpacingMm);
    if (sw.uncertaintyMm !== null) {
      const a = x(sw.bestSpacingMm - sw.uncertaintyMm);
      const b = x(sw.bestSpacingMm + sw.uncertaintyMm);
      out += `<rect x="${r2(Math.max(M.l, a))}" y="${M.t}" width="${r2(Math.min(width - M.r, b) - Math.max(M.l, a))}" height="${height - M.b - M.t}" fill="${theme.good}" fill-opacity="0.15"/>`;
    }
    out += `<line class="best" x1="${r2(bx)}" x2="${r2(bx)}" y1="${M.t}" y2="${height - M.b}" stroke="${theme.good}" stroke-width="2" stroke-dasharray="6 4"/>`;
    out += text(bx + 6, M.t + 14, `best ${pm(sw.bestSpacingMm, sw.uncertaintyMm, 2)} mm`, theme, { size: 12, fill: theme.good, weight: '600', cls: 'best-label' });
  }
  if (sw.curve.length > 1) {
    const d = line<{ spacingMm: number; metric: number }>().x((c) => x(c.spacingMm)).y((c) => y(c.metric))(sw.curve);
    out += `<path d="${d}" fill="none" stroke="${theme.vector}" stroke-width="2"/>`;
  }
  out += `<g class="points" fill="${theme.star}" stroke="${theme.star}">`;
  for (const p of pts) {
    const px = x(p.spacingMm);
    const py = y(p.metric!);
    if (p.metricErr) out += `<line x1="${r2(px)}" x2="${r2(px)}" y1="${r2(y(p.metric! - p.metricErr))}" y2="${r2(y(p.metric! + p.metricErr))}" stroke-width="1.5"/>`;
    out += `<circle cx="${r2(px)}" cy="${r2(py)}" r="5"><title>${esc(`${p.name}: ${num(p.spacingMm, 2)} mm, ${pm(p.metric, p.metricErr, 3)}`)}</title></circle>`;
  }
  out += '</g>';
  if (sw.note) out += text(10, 40, sw.note.length > 150 ? `${sw.note.slice(0, 147)}…` : sw.note, theme, { size: 11, fill: theme.muted });
  return out + '</svg>';
}
