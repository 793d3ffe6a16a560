/**
 * The self-contained HTML report: the summary, the findings and the same SVG figures as the
 * desktop program (core/report/svg), printable, with the full JSON report embedded as data.
 * No scripts, no outside resources.
 */
import type { Report } from './types.ts';
import type { Preview } from './svg/types.ts';
import { PRINT, type Theme } from './svg/theme.ts';
import { esc } from './svg/util.ts';
import { skySvg } from './svg/sky.ts';
import { shapeSvg } from './svg/shape.ts';
import { sizeSvg } from './svg/size.ts';
import { sensorSideSvg } from './svg/sensor-side.ts';
import { zonePsfSvg } from './svg/zone-psf.ts';
import { findingsHtml, summaryHtml } from './svg/panels.ts';
import { QUANTITIES, findingsCountWords } from './words.ts';
import { astrometryTableHtml, distortionFigureData, distortionSvg } from './svg/distortion.ts';

export interface HtmlReportOptions {
  /** Display name of the frame (default: the report's path). */
  name?: string;
  /** The stretched frame and the corner crops (core/report/pictures.ts; the CLI and the desktop program both make them). */
  preview?: Preview | null;
  theme?: Theme;
}

const cap = (t: string) => t[0].toUpperCase() + t.slice(1);

const CSS = `
:root { color-scheme: light; }
body { font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif; color: #111418; background: #fff; margin: 24px auto; max-width: 960px; padding: 0 16px; }
h1 { font-size: 22px; margin: 0 0 4px; } h2 { font-size: 17px; margin: 28px 0 8px; border-bottom: 1px solid #c8ced6; padding-bottom: 4px; }
.meta { color: #505a66; margin: 0 0 16px; }
table { border-collapse: collapse; } th, td { text-align: left; padding: 3px 10px 3px 0; vertical-align: top; } th { color: #505a66; font-weight: 600; }
.src { color: #505a66; font-size: 12px; }
figure { margin: 12px 0 20px; break-inside: avoid; page-break-inside: avoid; } figure svg { max-width: 100%; height: auto; display: block; }
figcaption { color: #505a66; font-size: 12px; margin-top: 4px; }
ol.findings { padding-left: 20px; } .finding { margin: 0 0 12px; break-inside: avoid; }
.finding .severity { font-weight: 700; } .severity-major .severity { color: #c92a2a; } .severity-minor .severity { color: #b35c00; } .severity-info .severity { color: #1c5d99; }
.finding-message { margin: 2px 0 4px; } .finding-numbers th, .finding-numbers td { font-size: 12px; padding: 1px 10px 1px 0; }
code { font-size: 12px; color: #505a66; }
nav.toc h2 { font-size: 15px; border: 0; margin: 16px 0 4px; } nav.toc ol { margin: 0; padding-left: 20px; columns: 2; } nav.toc a { color: #1c5d99; }
@media print { nav.toc { display: none; } }
@media print { body { margin: 0; max-width: none; } h2 { break-after: avoid; } }
`;

/** The report JSON as a non-executed data block; "<" is escaped so the text cannot close the element. */
function jsonBlock(report: Report): string {
  return `<script type="application/json" id="skyloupe-report">${JSON.stringify(report).replace(/</g, '\\u003c')}</script>`;
}

/** One section of the report: its anchor, its heading (also the table of contents' entry) and its body. */
interface Section { id: string; title: string; body: string }

export function reportHtml(report: Report, opts: HtmlReportOptions = {}): string {
  const theme = opts.theme ?? PRINT;
  const name = opts.name ?? report.frame.path;
  const fig = (svg: string, caption: string) => `<figure>${svg}<figcaption>${esc(caption)}</figcaption></figure>`;
  const sections: Section[] = [];
  const add = (id: string, title: string, body: string) => sections.push({ id, title, body });
  add('summary', 'Summary', summaryHtml(report));
  add('findings', 'Findings', `<p class="findings-count">${esc(cap(findingsCountWords(report.findings)))}</p>` + findingsHtml(report.findings));
  add('sky', 'Sky', fig(skySvg(report, { theme, preview: opts.preview ?? null, width: 900 }),
    `${opts.preview ? 'The frame, stretched, with e' : 'No picture of the frame was given to this report. E'}very measured star marked (clean stars solid, flagged stars dashed); ${report.frame.display.note}.`));
  add('shape', 'Shape map', fig(shapeSvg(report, { theme, width: 900 }), 'A line per zone: its length grows with the elongation a/b, its direction is the long axis of the stars there.'));
  add('size', 'Size maps', fig(sizeSvg(report, { theme, quantity: 'fwhmPx', width: 900, id: 'r-fwhm-px' }), 'FWHM in pixels, smooth fit over the field, with contours.')
    + fig(sizeSvg(report, { theme, quantity: 'fwhmArcsec', width: 900, id: 'r-fwhm-as' }), 'FWHM in arcseconds (needs focal length and pixel size).')
    + fig(sizeSvg(report, { theme, quantity: 'ellipticity', width: 900, id: 'r-ell' }), `${cap(QUANTITIES.sharedEllipticity.label)} 1 − b/a over the field, with contours: the elongation the stars of each part of the frame have in common (their e1, e2 averaged as vectors, so each star's noise averages out).`));
  add('sensor', 'Sensor tilt, seen edge-on', fig(sensorSideSvg(report, { theme, width: 900 }), 'The sensor seen from the side in two cuts through the frame centre, along the tilt axis and across it, against best focus: each edge\'s focus offset in µm (drawn exaggerated, as stated).'));
  if (report.astrometry) {
    const dd = distortionFigureData(report);
    add('lens', 'Sky position and lens geometry', astrometryTableHtml(report)
      + (dd ? fig(distortionSvg(dd, { theme, width: 900 }), `A square grid as the lens draws it (blue) over the ideal grid (grey), and the measured shift of each matched star from where a distortion-free lens would put it; all shifts drawn ${dd.exaggeration}× larger. The ring marks the optical centre.`) : ''));
  }
  add('stacks', 'Stacked stars per zone', fig(zonePsfSvg(report, { theme, width: 900 }), 'Each zone\'s clean stars aligned on their fitted centres (Lanczos-3) and averaged with a 3-sigma clip; FWHM, HFD and ellipticity measured on each stack.'));
  const toc = '<nav class="toc" aria-label="Contents"><h2>Contents</h2><ol>' + sections.map((x) => `<li><a href="#${x.id}">${x.title}</a></li>`).join('') + '</ol></nav>';
  const parts: string[] = [];
  parts.push(`<h1>Star shapes across the field: ${esc(name)}</h1>`);
  parts.push(`<p class="meta">skyloupe ${esc(report.tool.version)} · report ${esc(report.schema)} · made ${esc(report.createdAt)}</p>`);
  parts.push(toc);
  for (const x of sections) parts.push(`<section id="${x.id}"><h2>${x.title}</h2>${x.body}</section>`);
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; img-src data:; style-src 'unsafe-inline'">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="skyloupe ${esc(report.tool.version)}">
<title>skyloupe report: ${esc(name)}</title>
<style>${CSS}</style>
</head>
<body>
${parts.join('\n')}
${jsonBlock(report)}
</body>
</html>
`;
}
