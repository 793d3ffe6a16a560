/**
 * A self-contained HTML page for a focus series: the numbers, the findings in words, and the
 * same figures the desktop program can show (core/report/svg/through-focus.ts), with the full
 * skyloupe.throughfocus/1 result embedded as data. No scripts, no outside resources.
 */
import type { ThroughFocusResult } from '../series/through-focus.ts';
import { SEVERITY_WORDS } from '../series/words.ts';
import { PRINT, type Theme } from './svg/theme.ts';
import { esc, num, pm } from './svg/util.ts';
import { focusCurvesData, focusCurvesSvg, focusSurfaceData, focusSurfaceSvg, stampStripData, stampStripSvg, type ThroughFocusLike } from './svg/through-focus.ts';
import { VERSION } from '../version.ts';

const CSS = `
:root { color-scheme: light; }
body { font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif; color: #111418; background: #fff; margin: 24px auto; max-width: 960px; padding: 0 16px; }
h1 { font-size: 22px; margin: 0 0 4px; } h2 { font-size: 17px; margin: 28px 0 8px; border-bottom: 1px solid #c8ced6; padding-bottom: 4px; }
.meta { color: #505a66; margin: 0 0 16px; }
table { border-collapse: collapse; } th, td { text-align: left; padding: 3px 10px 3px 0; vertical-align: top; } th { color: #505a66; font-weight: 600; }
figure { margin: 12px 0 20px; break-inside: avoid; page-break-inside: avoid; } figure svg { max-width: 100%; height: auto; display: block; }
figcaption { color: #505a66; font-size: 12px; margin-top: 4px; }
ol.findings { padding-left: 20px; } .finding { margin: 0 0 12px; break-inside: avoid; }
.severity { font-weight: 700; } .severity-major .severity { color: #c92a2a; } .severity-minor .severity { color: #b35c00; } .severity-info .severity { color: #1c5d99; }
@media print { body { margin: 0; max-width: none; } h2 { break-after: avoid; } }
`;

function jsonBlock(r: ThroughFocusResult): string {
  return `<script type="application/json" id="skyloupe-throughfocus">${JSON.stringify(r).replace(/</g, '\\u003c')}</script>`;
}

/**
 * The series' numbers as [label, value] rows (values are HTML, text escaped): the HTML page and
 * the desktop program's Through focus view show the same rows.
 */
export function throughFocusSummaryRows(r: ThroughFocusResult): [string, string][] {
  return [
    ['Frames', `${r.positionsUm.length}, from ${num(r.positionsUm[0], 1)} to ${num(r.positionsUm[r.positionsUm.length - 1], 1)} µm${r.stepUnitUm ? ` (focuser steps of ${num(r.stepUnitUm, 3)} µm)` : ''}; ${r.stars.length} stars followed; ${r.grid.cols} × ${r.grid.rows} zones`],
    ['Best focus, on average over the frame', `${pm(r.bestFocusUm, r.bestFocusErrUm, 1)} µm`],
    ['Best focus at the centre', `${pm(r.centreFocusUm, r.centreFocusErrUm, 1)} µm`],
    ['Best compromise for the whole field', r.bestFieldFocusUm === null ? '–' : `${pm(r.bestFieldFocusUm, r.bestFieldFocusErrUm, 1)} µm (every point within ${num((r.fieldFocusSpreadUm ?? NaN) / 2, 1)} µm of its own focus)`],
    ['Critical focus zone', r.criticalFocusZone ? `±${num(r.criticalFocusZone.halfWidthUm, 1)} µm (±2.44 λ N², λ = ${r.criticalFocusZone.wavelengthNm} nm, f/${num(r.criticalFocusZone.fNumber, 2)}, ${esc(r.criticalFocusZone.fNumberSource)})` : '–'],
    ['Tilt: across the width, the height', r.tilt ? `${pm(r.tilt.acrossFrameUm.x, r.tilt.acrossFrameErrUm.x, 1)} µm, ${pm(r.tilt.acrossFrameUm.y, r.tilt.acrossFrameErrUm.y, 1)} µm${r.tilt.significant ? '' : ' (not significant)'}` : '–'],
    ['Field curvature: corners minus centre', r.curvature ? `${pm(r.curvature.cornerUm, r.curvature.cornerErrUm, 1)} µm${r.curvature.significant ? '' : ' (not significant)'}` : '–'],
    ['Astigmatism: sagittal minus tangential focus at the corners', r.astigmatism ? `${pm(r.astigmatism.separationUm, r.astigmatism.separationErrUm, 1)} µm${r.astigmatism.significant ? '' : ' (not significant)'}` : '–'],
    ['Spherical aberration', r.spherical.longitudinalUm === null ? esc(r.spherical.note ?? '–') : `${esc(r.spherical.kind)}, ${pm(r.spherical.longitudinalUm, r.spherical.errUm, 1)} µm${r.spherical.significant ? '' : ' (not significant)'}`],
  ];
}

export function throughFocusHtml(r: ThroughFocusResult, opts: { name?: string; theme?: Theme } = {}): string {
  const theme = opts.theme ?? PRINT;
  const like = r as unknown as ThroughFocusLike;
  const fig = (svg: string, caption: string) => `<figure>${svg}<figcaption>${esc(caption)}</figcaption></figure>`;
  const rows = throughFocusSummaryRows(r);
  const order: Record<string, number> = { major: 0, minor: 1, info: 2 };
  const findings = [...r.findings].sort((a, b) => order[a.severity] - order[b.severity])
    .map((f) => `<li class="finding severity-${esc(f.severity)}"><span class="severity">${esc(SEVERITY_WORDS[f.severity])}</span> ${esc(f.message)}</li>`).join('');
  const parts: string[] = [];
  parts.push(`<h1>Through focus: ${esc(opts.name ?? `${r.positionsUm.length} frames`)}</h1>`);
  parts.push(`<p class="meta">skyloupe ${esc(VERSION)} · ${esc(r.schema)} · positions in µm at the sensor, larger = sensor farther from the lens</p>`);
  parts.push('<h2>Summary</h2><table><tbody>' + rows.map(([k, v]) => `<tr><th scope="row">${esc(k)}</th><td>${v}</td></tr>`).join('') + '</tbody></table>');
  parts.push(`<h2>Findings</h2><ol class="findings">${findings}</ol>`);
  parts.push('<h2>Focus curves</h2>'
    + fig(focusCurvesSvg(focusCurvesData(like, 'hfd'), { theme, width: 900, id: 'tf-hfd' }), 'HFD of each zone against focuser position, zones laid out as in the frame; the line is the fitted cone-and-core hyperbola, the dashed mark its best focus, the band the critical focus zone.')
    + fig(focusCurvesSvg(focusCurvesData(like, 'rms'), { theme, width: 900, id: 'tf-rms' }), 'rms radius (from the unweighted second moments): its hyperbola is exact, and its best focus is the one the focus surface uses.'));
  const sd = focusSurfaceData(like);
  if (sd) parts.push('<h2>Focus surface</h2>' + fig(focusSurfaceSvg(sd, { theme, width: 900, id: 'tf-surface' }), 'Best-focus position over the frame (tilt plane plus curvature), with lines of equal focus and each zone\'s own value (open circles: outside the series, not fitted).'));
  const stamps = r.stamps.map((_, i) => stampStripData(like, i)).filter((d): d is NonNullable<typeof d> => !!d);
  if (stamps.length) parts.push('<h2>One star through focus</h2>' + stamps.map((d, i) => fig(stampStripSvg(d, { theme, width: 900, id: `tf-stamps-${i}` }), 'Each cut-out stretched on its own; the position nearest this zone\'s best focus is marked.')).join(''));
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; img-src data:; style-src 'unsafe-inline'">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="skyloupe ${esc(VERSION)}">
<title>skyloupe through focus</title>
<style>${CSS}</style>
</head>
<body>
${parts.join('\n')}
${jsonBlock(r)}
</body>
</html>
`;
}
