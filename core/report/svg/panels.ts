/** HTML fragments shared by the page and the HTML report: the findings and the summary table. */
import type { Report, ZoneSummary } from '../types.ts';
import { QUANTITIES, bySeverity, findingNumberRows, formatQuantity, numberLabel, severityWord } from '../words.ts';
import { esc, num, svgOpen, text, wrapWords } from './util.ts';
import type { Theme } from './theme.ts';
import { saturationText } from '../../frame/saturation.ts';

/** Words for a number key such as "cornerDefocusUm" -> "corner defocus (µm)": the one table in core/report/words.ts. */
export { numberLabel };

export function findingsHtml(findings: Report['findings']): string {
  if (!findings) return '<p class="findings-none">No diagnosis in this report yet.</p>';
  if (findings.length === 0) return '<p class="findings-none">No findings: nothing in this frame needs attention.</p>';
  // the code stays in a data attribute for scripts and tests; people read the severity's words
  return '<ol class="findings">' + bySeverity(findings).map((f) => {
    const rows = findingNumberRows(f.numbers);
    const nums = rows.length
      ? '<table class="finding-numbers"><tbody>' + rows.map((r) => `<tr data-key="${esc(r.key)}"><th scope="row">${esc(r.label)}</th><td>${esc(r.value)}</td></tr>`).join('') + '</tbody></table>'
      : '';
    return `<li class="finding severity-${esc(f.severity)}" data-code="${esc(f.code)}"><div class="finding-head"><span class="severity">${esc(severityWord(f.severity))}</span></div><p class="finding-message">${esc(f.message)}</p>${nums}</li>`;
  }).join('') + '</ol>';
}

/** A zone's row: stars, FWHM and both ellipticities under their names (core/report/words.ts). */
function zoneCell(z: ZoneSummary, zone: string): string {
  if (z.stars === 0) return 'no stars';
  const q = (k: 'medianEllipticity' | 'sharedEllipticity') => `${esc(QUANTITIES[k].label)} <span data-k="${zone}-${k}" title="${esc(QUANTITIES[k].help)}">${formatQuantity(k, z[k])}</span>`;
  return `${z.stars} stars · FWHM ${formatQuantity('medianFwhmPx', z.medianFwhmPx)} px<br>${q('medianEllipticity')}<br>${q('sharedEllipticity')}`;
}

export function summaryHtml(report: Report): string {
  const o = report.frame.optics;
  const s = report.summary;
  const src = (k: 'focalLengthMm' | 'pixelSizeUm' | 'fNumber') => (o.source[k] ? ` <span class="src">(${esc(o.source[k])}${o.source.keywords?.[k] ? ` ${esc(o.source.keywords[k])}` : ''})</span>` : '');
  const rows: [string, string][] = [
    ['Frame', `${esc(report.frame.path)} · ${report.frame.width} × ${report.frame.height} px · ${esc(report.frame.format)}${report.frame.cfa ? ` · ${esc(report.frame.cfa)} mosaic` : ''}`],
    ['Optics', `focal length ${num(o.focalLengthMm, 0)} mm${src('focalLengthMm')} · pixel ${num(o.pixelSizeUm, 2)} µm${src('pixelSizeUm')} · f/${num(o.fNumber, 1)}${src('fNumber')} · ${num(o.plateScaleArcsecPerPx, 3)} ″/px`],
    ...(report.frame.saturation ? [['Saturation', esc(saturationText(report.frame.saturation))] as [string, string]] : []),
    ['Stars', `<span data-k="stars">${s.stars}</span> used of <span data-k="measured">${report.detection.measured}</span> measured (${report.detection.candidates} detections)`],
    ['FWHM', `<span data-k="fwhm">${formatQuantity('medianFwhmPx', s.medianFwhmPx)}</span> px${s.medianFwhmArcsec !== null ? ` · ${formatQuantity('medianFwhmArcsec', s.medianFwhmArcsec)}″` : ''} (median) · HFD ${formatQuantity('medianHfdPx', s.medianHfdPx)} px`],
    ['Shape', `${esc(QUANTITIES.medianEllipticity.label)} <span data-k="ellipticity" title="${esc(QUANTITIES.medianEllipticity.help)}">${formatQuantity('medianEllipticity', s.medianEllipticity)}</span>`],
    ['Centre', zoneCell(s.center, 'center')],
    ['Corners', zoneCell(s.corners, 'corners')],
    ['Shown', esc(report.frame.display.note)],
  ];
  return '<table class="summary"><tbody>' + rows.map(([k, v]) => `<tr><th scope="row">${k}</th><td>${v}</td></tr>`).join('') + '</tbody></table>';
}

/** The findings as an SVG (for a PNG of the findings view): wrapped lines of text. */
export function findingsSvg(findings: Report['findings'], opts: { theme: Theme; width?: number }): string {
  const { theme } = opts;
  const width = opts.width ?? 800;
  const chars = Math.max(30, Math.floor((width - 40) / 7.2));
  const blocks = bySeverity(findings ?? []).map((f) => ({ head: severityWord(f.severity), lines: wrapWords(f.message, chars), f }));
  const height = 50 + blocks.reduce((a, b) => a + 24 + b.lines.length * 16 + 10, 0) + (blocks.length ? 0 : 20);
  let out = svgOpen(width, height, 'Findings', theme, 'findings-svg');
  out += text(16, 26, findings === undefined ? 'Findings: no diagnosis in this report' : `Findings (${blocks.length})`, theme, { size: 15, weight: '600' });
  let y = 56;
  for (const b of blocks) {
    out += text(16, y, b.head, theme, { size: 13, weight: '700', fill: b.f.severity === 'major' ? theme.bad : b.f.severity === 'minor' ? theme.selected : theme.vector });
    y += 20;
    for (const l of b.lines) { out += text(16, y, l, theme, { size: 12 }); y += 16; }
    y += 14;
  }
  return out + '</svg>';
}
