/** HTML fragments shared by the page and the HTML report: the findings and the summary table. */
import type { Report } from '../types.ts';
import { esc, num, svgOpen, text } from './util.ts';
import type { Theme } from './theme.ts';
import { saturationText } from '../../frame/saturation.ts';
import { NUMBER_WORDS } from '../number-words.ts';

const SEVERITY_LABEL: Record<string, string> = { major: 'Act on this', minor: 'Worth a look', info: 'Note' };

/** Words for a number key such as "cornerDefocusUm" -> "corner defocus (µm)". */
export function numberLabel(key: string): string {
  if (NUMBER_WORDS[key]) return NUMBER_WORDS[key];
  const units: [RegExp, string][] = [[/Um$/, ' (µm)'], [/Mm$/, ' (mm)'], [/Px2$/, ' (px²)'], [/Px$/, ' (px)'], [/Deg$/, ' (°)'], [/Mrad$/, ' (mrad)'], [/Arcsec$/, ' (arcsec)']];
  let unit = '';
  let base = key;
  for (const [re, u] of units) if (re.test(base)) { base = base.replace(re, ''); unit = u; break; }
  return base.replace(/([a-z0-9])([A-Z])/g, '$1 $2').toLowerCase() + unit;
}

function numberValue(v: unknown): string {
  if (typeof v === 'number') return Number.isInteger(v) ? String(v) : num(v, Math.abs(v) >= 100 ? 1 : Math.abs(v) >= 1 ? 2 : 3);
  return esc(v === null || v === undefined ? '–' : String(v));
}

export function findingsHtml(findings: Report['findings']): string {
  if (!findings) return '<p class="findings-none">No diagnosis in this report yet.</p>';
  if (findings.length === 0) return '<p class="findings-none">No findings: nothing in this frame needs attention.</p>';
  const order: Record<string, number> = { major: 0, minor: 1, info: 2 };
  const sorted = [...findings].sort((a, b) => (order[a.severity] ?? 3) - (order[b.severity] ?? 3));
  return '<ol class="findings">' + sorted.map((f) => {
    const nums = f.numbers && Object.keys(f.numbers).length
      ? '<table class="finding-numbers"><tbody>' + Object.entries(f.numbers).map(([k, v]) => `<tr><th scope="row">${esc(numberLabel(k))}</th><td>${numberValue(v)}</td></tr>`).join('') + '</tbody></table>'
      : '';
    return `<li class="finding severity-${esc(f.severity)}" data-code="${esc(f.code)}"><div class="finding-head"><span class="severity">${esc(SEVERITY_LABEL[f.severity] ?? f.severity)}</span> <code>${esc(f.code)}</code></div><p class="finding-message">${esc(f.message)}</p>${nums}</li>`;
  }).join('') + '</ol>';
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
    ['FWHM', `<span data-k="fwhm">${num(s.medianFwhmPx, 2)}</span> px${s.medianFwhmArcsec !== null ? ` · ${num(s.medianFwhmArcsec, 2)}″` : ''} (median) · HFD ${num(s.medianHfdPx, 2)} px`],
    ['Ellipticity', `<span data-k="ellipticity">${num(s.medianEllipticity, 3)}</span> (median)`],
    ['Centre', `${s.center.stars} stars · FWHM ${num(s.center.medianFwhmPx, 2)} px · e ${num(s.center.meanShapeE, 3)}`],
    ['Corners', `${s.corners.stars} stars · FWHM ${num(s.corners.medianFwhmPx, 2)} px · e ${num(s.corners.meanShapeE, 3)}`],
    ['Shown', esc(report.frame.display.note)],
  ];
  return '<table class="summary"><tbody>' + rows.map(([k, v]) => `<tr><th scope="row">${k}</th><td>${v}</td></tr>`).join('') + '</tbody></table>';
}

/** The findings as an SVG (for a PNG of the findings view): wrapped lines of text. */
export function findingsSvg(findings: Report['findings'], opts: { theme: Theme; width?: number }): string {
  const { theme } = opts;
  const width = opts.width ?? 800;
  const chars = Math.max(30, Math.floor((width - 40) / 7.2));
  const wrap = (s: string) => {
    const out: string[] = [];
    let cur = '';
    for (const w of s.split(/\s+/)) {
      if ((cur + ' ' + w).trim().length > chars) { out.push(cur); cur = w; } else cur = (cur + ' ' + w).trim();
    }
    if (cur) out.push(cur);
    return out;
  };
  const blocks = (findings ?? []).map((f) => ({ head: `${SEVERITY_LABEL[f.severity] ?? f.severity} · ${f.code}`, lines: wrap(f.message), f }));
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
