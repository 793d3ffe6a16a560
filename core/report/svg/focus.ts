/**
 * The focus plane: the fitted linear part of the focus error over the sensor outline (shaded,
 * with lines of equal focus), the tilt axis, and the focus error found at each corner.
 */
import { faultVerdict } from '../words.ts';
import { scaleLinear } from 'd3-scale';
import type { Report } from '../types.ts';
import type { TiltDiagnosis } from '../../diagnose/types.ts';
import type { Theme } from './theme.ts';
import { diagnosisOf, emptyFigure, frameMap, num, pm, r2, svgOpen, text, wrapWords } from './util.ts';

export interface FocusOptions { theme: Theme; width?: number }

/**
 * Gradient of the linear focus term per frame pixel, (gx, gy), from the across-frame changes and
 * the axis: |gx| = |across width| / W, |gy| = |across height| / H, signs from the axis direction.
 */
export function planeGradient(t: Pick<TiltDiagnosis, 'axisDeg'>, across: { x: number | null; y: number | null }, W: number, H: number): { gx: number; gy: number } | null {
  if (t.axisDeg === null || across.x === null || across.y === null) return null;
  const a = (t.axisDeg * Math.PI) / 180;
  const sx = Math.cos(a) < 0 ? -1 : 1;
  const sy = Math.sin(a) < 0 ? -1 : 1;
  return { gx: (sx * Math.abs(across.x)) / W, gy: (sy * Math.abs(across.y)) / H };
}

export function focusSvg(report: Report, opts: FocusOptions): string {
  const { theme } = opts;
  const width = opts.width ?? 900;
  const W = report.frame.width;
  const H = report.frame.height;
  const side = 60;
  const top = 60;
  const s = (width - 2 * side - 200) / W;
  const plotH = H * s;
  const height = plotH + top + 90;
  const label = 'Focus plane';
  const d = diagnosisOf(report);
  if (!d) return emptyFigure(width, height, label, 'no diagnosis in this report', theme);
  const t = d.tilt;
  if (!t.supported) return emptyFigure(width, height, label, t.note ?? 'the data do not support a tilt fit', theme);
  const um = t.acrossFrameUm.x !== null && t.acrossFrameUm.y !== null;
  const unit = um ? 'µm' : 'px blur';
  const across = um ? t.acrossFrameUm : t.acrossFrameBlurPx;
  const acrossErr = um ? t.acrossFrameErrUm : t.acrossFrameBlurErrPx;
  const grad = planeGradient(t, across, W, H);
  const m = frameMap(report, s, side, top);
  const cx = (W - 1) / 2;
  const cy = (H - 1) / 2;
  const X0 = m.x(-0.5);
  const X1 = m.x(W - 0.5);
  const Ya = m.y(-0.5);
  const Yb = m.y(H - 0.5);
  const top0 = Math.min(Ya, Yb);
  let out = svgOpen(width, height, label, theme, 'focus-svg');
  out = out.replace('<svg ', `<svg data-significant="${t.significant}" data-severity="${faultVerdict(report.findings, 'TILT').severity ?? 'none'}" data-sign-resolved="${t.signResolved}" `);
  out += text(10, 22, label, theme, { size: 14, weight: '600' });
  out += `<defs><clipPath id="focus-clip"><rect x="${r2(X0)}" y="${r2(top0)}" width="${r2(X1 - X0)}" height="${r2(plotH)}"/></clipPath>`;
  let planeLo = 0;
  let planeHi = 0;
  if (grad) {
    // the plane (relative to the frame centre) is extreme at two opposite corners
    const corners = [[-0.5, -0.5], [W - 0.5, -0.5], [-0.5, H - 0.5], [W - 0.5, H - 0.5]].map(([x, y]) => grad.gx * (x - cx) + grad.gy * (y - cy));
    planeLo = Math.min(...corners);
    planeHi = Math.max(...corners);
    const g2 = grad.gx * grad.gx + grad.gy * grad.gy || 1;
    // gradient end points in frame coordinates: the centre moved along the gradient to the extreme values
    const p = (v: number) => ({ x: cx + (grad.gx * v) / g2, y: cy + (grad.gy * v) / g2 });
    const a = p(planeLo);
    const b = p(planeHi);
    out += `<linearGradient id="focus-grad" gradientUnits="userSpaceOnUse" x1="${r2(m.x(a.x))}" y1="${r2(m.y(a.y))}" x2="${r2(m.x(b.x))}" y2="${r2(m.y(b.y))}"><stop offset="0" stop-color="${theme.ramp(0.1)}"/><stop offset="1" stop-color="${theme.ramp(0.9)}"/></linearGradient>`;
  }
  out += '</defs>';
  out += `<rect x="${r2(X0)}" y="${r2(top0)}" width="${r2(X1 - X0)}" height="${r2(plotH)}" fill="${grad ? 'url(#focus-grad)' : theme.panel}" stroke="${theme.frame}" stroke-width="1.5"/>`;
  if (grad && planeHi - planeLo > 0) {
    // lines of equal focus, perpendicular to the axis
    const levels = scaleLinear().domain([planeLo, planeHi]).ticks(6).filter((v) => v > planeLo && v < planeHi);
    const g2 = grad.gx * grad.gx + grad.gy * grad.gy;
    const L = Math.hypot(W, H);
    const fmt = scaleLinear().domain([planeLo, planeHi]).tickFormat(6);
    let labels = '';
    out += `<g clip-path="url(#focus-clip)" stroke="${theme.contour}" stroke-opacity="0.6" stroke-dasharray="4 3">`;
    for (const v of levels) {
      const px = cx + (grad.gx * v) / g2;
      const py = cy + (grad.gy * v) / g2;
      const n = Math.sqrt(g2);
      const ux = -grad.gy / n;
      const uy = grad.gx / n;
      out += `<line x1="${r2(m.x(px - ux * L))}" y1="${r2(m.y(py - uy * L))}" x2="${r2(m.x(px + ux * L))}" y2="${r2(m.y(py + uy * L))}"/>`;
      // label on the line, a little away from the tilt axis, when that point is inside the frame
      const lx = px + ux * 0.3 * Math.min(W, H);
      const ly = py + uy * 0.3 * Math.min(W, H);
      if (lx >= 0 && lx <= W - 1 && ly >= 0 && ly <= H - 1) {
        labels += `<text x="${r2(m.x(lx))}" y="${r2(m.y(ly) - 4)}" font-size="10" fill="${theme.fg}" stroke="${theme.bg}" stroke-width="3" paint-order="stroke" text-anchor="middle">${fmt(v)}</text>`;
      }
    }
    out += '</g>' + labels;
  }
  if (t.axisDeg !== null) {
    const a = (m.angle(t.axisDeg) * Math.PI) / 180;
    const r = 0.42 * Math.min(X1 - X0, plotH);
    const ccx = m.x(cx);
    const ccy = m.y(cy);
    const ex = r * Math.cos(a);
    const ey = r * Math.sin(a);
    out += `<g class="tilt-axis" stroke="${theme.selected}" stroke-width="2.5" fill="${theme.selected}">`;
    out += `<line x1="${r2(ccx - ex)}" y1="${r2(ccy - ey)}" x2="${r2(ccx + ex)}" y2="${r2(ccy + ey)}"/>`;
    const head = (x: number, y: number, dir: number) => {
      const hx = 10 * Math.cos(a) * dir;
      const hy = 10 * Math.sin(a) * dir;
      return `<path d="M${r2(x)},${r2(y)}L${r2(x - hx - hy * 0.5)},${r2(y - hy + hx * 0.5)}L${r2(x - hx + hy * 0.5)},${r2(y - hy - hx * 0.5)}Z" stroke="none"/>`;
    };
    out += head(ccx + ex, ccy + ey, 1);
    if (!t.signResolved) out += head(ccx - ex, ccy - ey, -1);
    out += '</g>';
    out += text(ccx + ex * 1.05 + 6, ccy + ey * 1.05, `axis ${pm(t.axisDeg, t.axisErrDeg, 0)}°`, theme, { size: 11, fill: theme.selected });
  }
  // the corner values the diagnosis found
  for (const c of t.corners) {
    const x = m.x(c.xPx);
    const y = m.y(c.yPx);
    const left = x < m.x(cx);
    const above = y < m.y(cy);
    const tx = left ? X0 - 4 : X1 + 4;
    const ty = above ? top0 - 8 : top0 + plotH + 18;
    const v = um && c.defocusUm !== null ? `${pm(c.defocusUm, c.defocusErrUm, 1)} µm` : `${pm(c.blurDiameterPx, c.blurDiameterErrPx, 2)} px blur`;
    out += `<circle cx="${r2(x)}" cy="${r2(y)}" r="4" fill="${theme.fg}"/>`;
    out += text(tx, ty, `${c.name}: ${v}`, theme, { size: 12, anchor: left ? 'start' : 'end', cls: 'corner-value' });
  }
  // numbers beside the plane
  const nx = X1 + 24;
  let ny = top0 + 10;
  // side text wraps to the room right of the plane (about 0.6 em per character)
  const sideChars = (size: number) => Math.max(12, Math.floor((width - nx - 8) / (0.6 * size)));
  const line = (s: string, fill = theme.fg, size = 12) => {
    for (const l of wrapWords(s, sideChars(size))) { out += text(nx, ny, l, theme, { size, fill, cls: 'focus-note' }); ny += size + 6; }
  };
  // the verdict on the findings' scale: the TILT finding's severity, or "within the noise"
  const v = faultVerdict(report.findings, 'TILT');
  line(`Tilt: ${v.words}`, v.severity === 'major' ? theme.bad : v.severity === 'minor' ? theme.selected : v.severity ? theme.vector : theme.good, 13);
  if (t.tiltMrad !== null) line(`${pm(t.tiltMrad, t.tiltErrMrad, 2)} mrad`);
  line(`across width ${pm(across.x, acrossErr.x, 1)} ${unit}`);
  line(`across height ${pm(across.y, acrossErr.y, 1)} ${unit}`);
  line(`certainty ${num(t.significance, 1)} σ`, theme.muted, 11);
  line(`${t.starsUsed} stars`, theme.muted, 11);
  if (!t.signResolved) {
    line('One frame gives sizes only: which side is nearer is open.', theme.muted, 11);
  }
  if (grad) {
    ny += 6;
    line(`plane: ${num(planeLo, 1)} to ${num(planeHi, 1)} ${unit} relative to the centre`, theme.muted, 11);
  }
  // the note wraps under the plane; the figure grows to hold it (and the side text, if longer)
  const noteLines = t.note ? wrapWords(t.note, Math.max(30, Math.floor((width - 20) / 6.6))) : [];
  const fullH = Math.max(height, ny + 8) + Math.max(0, noteLines.length - 1) * 15;
  noteLines.forEach((l, i) => { out += text(10, fullH - 12 - (noteLines.length - 1 - i) * 15, l, theme, { size: 11, fill: theme.muted, cls: 'focus-note' }); });
  if (fullH !== height) out = out.replace(/^(<svg[^>]*?)viewBox="0 0 ([\d.]+) [\d.]+" width="([\d.]+)" height="[\d.]+"/, (_m, a, w, dw) => `${a}viewBox="0 0 ${w} ${r2(fullH)}" width="${dw}" height="${r2(fullH)}"`)
    .replace(/(<title>[^<]*<\/title><rect x="0" y="0" width="[\d.]+" height=")[\d.]+"/, `$1${r2(fullH)}"`);
  return out + '</svg>';
}
