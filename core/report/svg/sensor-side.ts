/**
 * The sensor seen edge-on: two cross-sections through the frame centre, along the tilt axis
 * (where the focus error changes fastest) and across it, each showing the sensor against the
 * plane of best focus at the centre, with each edge's offset in µm, focus offsets drawn a
 * stated number of times larger than distances on the sensor, and what to turn.
 * The tilt is the linear part of the diagnosis's focus surface (core/diagnose/tilt.ts):
 * acrossFrameUm is the change of the focus error across the full width and height.
 */
import type { Report } from '../types.ts';
import type { TiltDiagnosis } from '../../diagnose/types.ts';
import type { Theme } from './theme.ts';
import { diagnosisOf, emptyFigure, esc, num, pm, r2, svgOpen, text, wrapWords } from './util.ts';

/** The severity scale in people's words (JSON keeps major | minor | info). */
const SEVERITY_WORDS: Record<string, string> = { major: 'Act on it', minor: 'Worth a look', info: 'Note' };

/**
 * A tilt whose sign is settled (a focus pair, core/series/focus-pair.ts): the change of best-focus
 * position across the width (+x) and height (+y), µm, as the pair reports it (DESIGN.md); < 0 = that
 * side's best focus is nearer, so that side sits behind focus (too far from the lens).
 */
export interface SignedTilt {
  acrossFrameUm: { x: number; y: number };
  acrossFrameErrUm: { x: number; y: number };
  axisErrDeg: number | null;
  significant: boolean;
}

export interface SensorSideOptions { theme: Theme; width?: number; /** Draw this settled tilt instead of the single frame's. */ signed?: SignedTilt | null }

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

/** One end of a section: where the line through the centre leaves the frame. */
export interface SectionEnd {
  /** Frame px (storage coordinates). */
  xPx: number;
  yPx: number;
  /** "right", "top-left" ... as the frame is displayed. */
  name: string;
  /** Distance from the centre along the sensor, µm (px when the pixel size is unknown). */
  along: number;
  /** The tilt's focus offset of this end against the centre, in the figure's unit (µm, or px of blur). */
  offset: number;
  offsetErr: number | null;
}

export interface SensorSection {
  kind: 'along' | 'across';
  /** Direction of the section on the frame, degrees from +x toward +y (storage). */
  angleDeg: number;
  /** The end displayed higher first. */
  ends: [SectionEnd, SectionEnd];
}

export interface SensorSideData {
  unit: 'µm' | 'px blur';
  /** Unit of distances along the sensor: µm with a pixel size, else frame px. */
  alongUnit: 'µm' | 'px';
  significant: boolean;
  signResolved: boolean;
  axisDeg: number;
  axisErrDeg: number | null;
  sections: [SensorSection, SensorSection];
  /** Difference between the along-axis ends, and its error. */
  endToEnd: number;
  endToEndErr: number | null;
  /** The end with the larger focus error at its corner (the softer side), by the diagnosis's corners. */
  softer: string | null;
}

function sideWords(dx: number, dy: number, flipY: boolean): string {
  // screen-up is -y unless the last row is shown on top
  const sy = flipY ? -dy : dy;
  const ang = (Math.atan2(-sy, dx) * 180) / Math.PI; // screen angle, counter-clockwise from right
  const names = ['right', 'top-right', 'top', 'top-left', 'left', 'bottom-left', 'bottom', 'bottom-right'];
  return names[((Math.round(ang / 45) % 8) + 8) % 8];
}

/** The geometry the figure draws, from the report alone; null when the diagnosis has no tilt fit. */
export function sensorSideData(report: Report, signed: SignedTilt | null = null): SensorSideData | null {
  const W = report.frame.width;
  const H = report.frame.height;
  const d = diagnosisOf(report);
  let t: Pick<TiltDiagnosis, 'axisDeg' | 'axisErrDeg' | 'significant' | 'signResolved' | 'corners'>;
  let um: boolean;
  let acrossErr: { x: number | null; y: number | null };
  let grad: { gx: number; gy: number } | null;
  if (signed) {
    // the pair's signs are the plane's own: no axis quadrant to borrow
    // the pair reports the change of best-focus position (DESIGN.md); the figure draws the focus
    // error, its negative: where best focus comes nearer, that side sits behind focus
    const gx = -signed.acrossFrameUm.x / W;
    const gy = -signed.acrossFrameUm.y / H;
    t = { axisDeg: (Math.atan2(gy, gx) * 180) / Math.PI, axisErrDeg: signed.axisErrDeg, significant: signed.significant, signResolved: true, corners: [] };
    um = true;
    acrossErr = signed.acrossFrameErrUm;
    grad = gx === 0 && gy === 0 ? null : { gx, gy };
  } else {
    if (!d) return null;
    const dt: TiltDiagnosis = d.tilt;
    if (!dt.supported || dt.axisDeg === null) return null;
    t = dt;
    um = dt.acrossFrameUm.x !== null && dt.acrossFrameUm.y !== null;
    const across = um ? dt.acrossFrameUm : dt.acrossFrameBlurPx;
    acrossErr = um ? dt.acrossFrameErrUm : dt.acrossFrameBlurErrPx;
    grad = planeGradient(dt, across, W, H);
  }
  if (!grad || t.axisDeg === null) return null;
  const pixel = report.frame.optics.pixelSizeUm;
  const alongPerPx = pixel && pixel > 0 ? pixel : 1;
  const flipY = report.frame.display?.topRow === 'last';
  const cx = (W - 1) / 2;
  const cy = (H - 1) / 2;
  // error of the linear term per px, from the errors across width and height (independent, first order)
  const gErr = (ux: number, uy: number): number | null => {
    const ex = acrossErr.x;
    const ey = acrossErr.y;
    if (ex === null || ey === null) return null;
    return Math.hypot((ux * ex) / W, (uy * ey) / H);
  };
  const section = (kind: 'along' | 'across', deg: number): SensorSection => {
    const a = (deg * Math.PI) / 180;
    const ux = Math.cos(a);
    const uy = Math.sin(a);
    // the line leaves the frame rectangle [-0.5, W-0.5] x [-0.5, H-0.5] at +-tMax
    const tx = Math.abs(ux) > 1e-12 ? W / 2 / Math.abs(ux) : Infinity;
    const ty = Math.abs(uy) > 1e-12 ? H / 2 / Math.abs(uy) : Infinity;
    const tMax = Math.min(tx, ty);
    const g = grad.gx * ux + grad.gy * uy; // focus change per px along the section
    const ge = gErr(ux, uy);
    const end = (sgn: number): SectionEnd => ({
      xPx: cx + sgn * tMax * ux, yPx: cy + sgn * tMax * uy,
      name: sideWords(sgn * ux, sgn * uy, flipY),
      along: sgn * tMax * alongPerPx,
      offset: kind === 'across' ? 0 : sgn * tMax * g,
      offsetErr: kind === 'across' || ge === null ? (kind === 'across' ? 0 : null) : tMax * ge,
    });
    const e1 = end(1);
    const e2 = end(-1);
    const screenY = (e: SectionEnd) => (flipY ? -(e.yPx - cy) : e.yPx - cy);
    return { kind, angleDeg: deg, ends: screenY(e1) <= screenY(e2) ? [e1, e2] : [e2, e1] };
  };
  const axis = t.axisDeg;
  const along = section('along', axis);
  const acrossS = section('across', axis + 90);
  const [a0, a1] = along.ends;
  const endToEnd = Math.abs(a0.offset - a1.offset);
  const endToEndErr = a0.offsetErr !== null && a1.offsetErr !== null ? a0.offsetErr + a1.offsetErr : null;
  // the softer end: its nearest diagnosed corner has the larger focus error
  let softer: string | null = null;
  if (t.corners.length) {
    const nearest = (e: SectionEnd) => t.corners.reduce((b, c) => (Math.hypot(c.xPx - e.xPx, c.yPx - e.yPx) < Math.hypot(b.xPx - e.xPx, b.yPx - e.yPx) ? c : b));
    const b0 = nearest(a0).blurDiameterPx;
    const b1 = nearest(a1).blurDiameterPx;
    if (b0 !== b1) softer = b0 > b1 ? a0.name : a1.name;
  }
  return {
    unit: um ? 'µm' : 'px blur', alongUnit: pixel && pixel > 0 ? 'µm' : 'px',
    significant: t.significant, signResolved: t.signResolved, axisDeg: axis, axisErrDeg: t.axisErrDeg,
    sections: [along, acrossS], endToEnd, endToEndErr, softer,
  };
}

export interface SensorSideLayout {
  /** Screen px per unit of focus offset, and per unit along the sensor; exaggeration = their ratio (µm on both). */
  zScale: number;
  sScale: number;
  exaggeration: number;
}

/** Scales shared by both panels: the sensor fills the panel height, the largest offset about a third of its half width. */
export function sensorSideLayout(d: SensorSideData, panelW: number, panelH: number): SensorSideLayout {
  const span = Math.max(...d.sections.map((s) => Math.abs(s.ends[0].along - s.ends[1].along)));
  const sScale = (panelH - 80) / Math.max(span, 1e-9);
  const big = Math.max(...d.sections.flatMap((s) => s.ends.map((e) => Math.abs(e.offset) + (e.offsetErr ?? 0))), d.unit === 'µm' ? 5 : 0.5);
  if (d.unit === 'µm' && d.alongUnit === 'µm') {
    // both in µm: a true exaggeration, a round 1-2-5 number
    const exaggeration = Math.max(1, roundDown((0.34 * panelW) / (big * sScale)));
    return { zScale: exaggeration * sScale, sScale, exaggeration };
  }
  return { zScale: (0.32 * panelW) / big, sScale, exaggeration: NaN };
}

/** The largest 1-2-5 number not above v. */
function roundDown(v: number): number {
  const p = 10 ** Math.floor(Math.log10(v));
  for (const m of [5, 2, 1]) if (m * p <= v) return m * p;
  return p;
}

export function sensorSideSvg(report: Report, opts: SensorSideOptions): string {
  const { theme } = opts;
  const width = opts.width ?? 900;
  const label = 'Sensor tilt, seen edge-on';
  const signed = opts.signed ?? null;
  const dg = diagnosisOf(report);
  if (!dg && !signed) return emptyFigure(width, 300, label, 'no diagnosis in this report', theme);
  if (dg && !dg.tilt.supported && !signed) return emptyFigure(width, 300, label, dg.tilt.note ?? 'the stars do not support a focus fit', theme);
  const d = sensorSideData(report, signed);
  if (!d) return emptyFigure(width, 300, label, 'no focus gradient could be fitted', theme);
  const note = signed ? null : dg?.tilt.note ?? null;
  const gap = 30;
  const panelW = (width - 3 * gap) / 2;
  const panelH = 300;
  const top = 86;
  const L = sensorSideLayout(d, panelW, panelH);
  const curv = !signed && dg?.curvature?.significant && dg.curvature.cornerDefocusUm !== null ? dg.curvature.cornerDefocusUm : null;
  const noteLines = wrapWords(actionText(d, note, curv), Math.floor(width / 7));
  const height = top + panelH + 70 + noteLines.length * 16;
  let out = svgOpen(width, height, label, theme, 'sensor-side-svg');
  out = out.replace('<svg ', `<svg data-z-scale="${L.zScale}" data-s-scale="${L.sScale}" data-exaggeration="${Number.isFinite(L.exaggeration) ? L.exaggeration : ''}" data-significant="${d.significant}" data-sign-resolved="${d.signResolved}" `);
  out += text(gap, 24, label, theme, { size: 15, weight: '600' });
  const scaleWords = Number.isFinite(L.exaggeration)
    ? `Light comes from the lens at the left. Focus offsets drawn ${num(L.exaggeration, 0)}× larger than distances on the sensor.`
    : `Light comes from the lens at the left. Offsets in px of blur (no pixel size or f-number: no µm).`;
  out += text(gap, 44, scaleWords, theme, { size: 12, fill: theme.muted });
  // the verdict on the findings' one scale (the tilt finding's severity), never a scale of its own
  const sev = signed ? (signed.significant ? 'minor' : undefined) : (report.findings ?? []).find((f) => f.code === 'TILT')?.severity;
  const verdict = signed ? (signed.significant ? 'The focus pair shows a tilt' : 'The focus pair shows no tilt that matters') : sev ? `${SEVERITY_WORDS[sev] ?? sev}: the sensor is tilted` : 'No tilt finding';
  out += text(gap, 62, `${verdict}, ${pm(d.endToEnd, d.endToEndErr, 1)} ${d.unit} from edge to edge along the axis.`, theme, { size: 13, fill: sev === 'major' ? theme.bad : sev === 'minor' ? theme.selected : theme.good, cls: 'tilt-verdict' });
  d.sections.forEach((s, k) => {
    const X = gap + k * (panelW + gap);
    out += panel(s, d, L, X, top, panelW, panelH, theme, report);
  });
  let y = top + panelH + 56;
  for (const l of noteLines) { out += text(gap, y, l, theme, { size: 12, cls: 'tilt-action' }); y += 16; }
  return out + '</svg>';
}

function actionText(d: SensorSideData, note: string | null, curvatureUm: number | null): string {
  const [a, b] = d.sections[0].ends;
  const amount = `${pm(d.endToEnd, d.endToEndErr, 1)} ${d.unit}`;
  const parts: string[] = [];
  if (d.significant && d.signResolved) {
    // settled: a positive offset is behind focus, farther from the lens
    const far = a.offset > b.offset ? a : b;
    const near = far === a ? b : a;
    parts.push(`What to turn: the ${far.name} edge sits behind focus (too far from the lens) and the ${near.name} edge in front of it; bring the ${far.name} edge ${amount} toward the lens against the ${near.name} edge.`);
  } else if (d.significant) {
    const soft = d.softer ?? a.name;
    const sharp = soft === a.name ? b.name : a.name;
    parts.push(`What to turn: move the ${soft} edge ${amount} toward best focus against the ${sharp} edge (the ${soft} side's stars are the larger).`);
  } else parts.push(`Nothing to turn: the change of focus across the sensor is within what the stars can tell, or too small to matter.`);
  if (!d.signResolved) parts.push('One frame tells how far each edge is from focus, not on which side: the dotted sensor is the mirror reading, just as possible. Two frames a known focus step apart (a focus pair) tell which edge is nearer the lens.');
  if (curvatureUm !== null) parts.push(`Field curvature also bends best focus, by about ${num(curvatureUm, 0)} µm at the corners against the centre; it is symmetric about the centre, so no tilt of the sensor removes it (not drawn).`);
  if (note) parts.push(note.replace(/\bum\b/g, 'µm').replace(/\+-/g, '±').replace(/\bdeg\b/g, '°'));
  return parts.join(' ');
}

function panel(s: SensorSection, d: SensorSideData, L: SensorSideLayout, X: number, Y: number, w: number, h: number, theme: Theme, report: Report): string {
  const zc = X + w * 0.5; // the focus plane's position in the panel
  const midY = Y + h / 2;
  const sy = (along: number, end: number) => midY + (end === 0 ? -1 : 1) * Math.abs(along) * L.sScale;
  const zx = (off: number) => zc + off * L.zScale;
  const axisDeg = ((s.angleDeg % 180) + 180) % 180 > 90 ? (((s.angleDeg % 180) + 180) % 180) - 180 : ((s.angleDeg % 180) + 180) % 180;
  let out = `<g class="section" data-kind="${s.kind}">`;
  out += `<rect x="${r2(X)}" y="${r2(Y)}" width="${r2(w)}" height="${r2(h)}" fill="${theme.panel}" stroke="${theme.grid}" stroke-width="1"/>`;
  out += text(X + 8, Y - 8, s.kind === 'along' ? `Along the tilt axis (${num(axisDeg, 0)}°${d.axisErrDeg !== null ? ` ± ${num(d.axisErrDeg, 0)}°` : ''})` : `Across the tilt axis (${num(axisDeg, 0)}°)`, theme, { size: 13, weight: '600' });
  // the optical axis and the lens at the left
  out += `<line x1="${r2(X + 10)}" y1="${r2(midY)}" x2="${r2(X + w - 10)}" y2="${r2(midY)}" stroke="${theme.grid}" stroke-dasharray="2 4"/>`;
  const lx = X + 26;
  out += `<path class="lens" d="M${r2(lx)},${r2(midY - 50)} Q${r2(lx + 14)},${r2(midY)} ${r2(lx)},${r2(midY + 50)} Q${r2(lx - 14)},${r2(midY)} ${r2(lx)},${r2(midY - 50)}Z" fill="none" stroke="${theme.muted}" stroke-width="1.5"/>`;
  out += text(lx, midY + 66, 'lens', theme, { size: 11, anchor: 'middle', fill: theme.muted });
  // best focus (the focal surface at the centre's focus)
  const yTop = sy(s.ends[0].along, 0);
  const yBot = sy(s.ends[1].along, 1);
  out += `<line class="focal-surface" x1="${r2(zc)}" y1="${r2(Y + 18)}" x2="${r2(zc)}" y2="${r2(Y + h - 4)}" stroke="${theme.fg}" stroke-opacity="0.6" stroke-width="1.5" stroke-dasharray="6 4"/>`;
  out += text(zc, Y + 14, 'best focus (centre)', theme, { size: 11, anchor: 'middle', fill: theme.muted });
  // the sensor: a line through its edges' offsets (and its mirror twin while the sign is open)
  const [e0, e1] = s.ends;
  const p0 = { x: zx(e0.offset), y: yTop };
  const p1 = { x: zx(e1.offset), y: yBot };
  if (!d.signResolved && (e0.offset !== 0 || e1.offset !== 0)) {
    out += `<line class="sensor-mirror" x1="${r2(zx(-e0.offset))}" y1="${r2(p0.y)}" x2="${r2(zx(-e1.offset))}" y2="${r2(p1.y)}" stroke="${theme.fg}" stroke-opacity="0.45" stroke-width="3" stroke-dasharray="2 5" stroke-linecap="round"/>`;
  }
  out += `<line class="sensor" x1="${r2(p0.x)}" y1="${r2(p0.y)}" x2="${r2(p1.x)}" y2="${r2(p1.y)}" stroke="${theme.selected}" stroke-width="6" stroke-linecap="butt"/>`;
  // each edge: its offset from best focus, drawn and written
  for (const [k, e] of [[0, e0], [1, e1]] as const) {
    const y = k === 0 ? p0.y : p1.y;
    const x = zx(e.offset);
    out += `<g class="edge" data-name="${esc(e.name)}" data-offset="${r2(e.offset * 1000) / 1000}" data-drawn-dx="${r2(x - zc)}">`;
    out += `<line x1="${r2(zc)}" y1="${r2(y)}" x2="${r2(x)}" y2="${r2(y)}" stroke="${theme.vector}" stroke-width="1.5"/>`;
    const side = d.signResolved && e.offset !== 0 ? (e.offset > 0 ? ' behind focus' : ' in front of focus') : '';
    const words = `${e.name} edge: ${e.offset === 0 ? `0 ${d.unit}` : `${pm(Math.abs(e.offset), e.offsetErr, 1)} ${d.unit}${side}`}`;
    // above the upper end, below the lower one, centred on the edge and kept inside the panel
    const half = (words.length * 7) / 2;
    const tx = Math.min(Math.max(x, X + 6 + half), X + w - 6 - half);
    out += `<text x="${r2(tx)}" y="${r2(k === 0 ? y - 12 : y + 22)}" font-size="12" fill="${theme.fg}" stroke="${theme.panel}" stroke-width="4" paint-order="stroke" text-anchor="middle" class="edge-words">${esc(words)}</text>`;
    out += '</g>';
  }
  // where the section runs across the frame
  out += inset(s, X + 10, Y + 10, 72, report, theme);
  return out + '</g>';
}

function inset(s: SensorSection, x: number, y: number, wMax: number, report: Report, theme: Theme): string {
  const W = report.frame.width;
  const H = report.frame.height;
  const k = wMax / Math.max(W, H);
  const w = W * k;
  const h = H * k;
  const flipY = report.frame.display?.topRow === 'last';
  const px = (fx: number) => x + (fx + 0.5) * k;
  const py = (fy: number) => (flipY ? y + (H - 0.5 - fy) * k : y + (fy + 0.5) * k);
  const [a, b] = s.ends;
  return `<g class="inset"><rect x="${r2(x)}" y="${r2(y)}" width="${r2(w)}" height="${r2(h)}" fill="none" stroke="${theme.frame}" stroke-width="1"/>`
    + `<line x1="${r2(px(a.xPx))}" y1="${r2(py(a.yPx))}" x2="${r2(px(b.xPx))}" y2="${r2(py(b.yPx))}" stroke="${theme.selected}" stroke-width="2"/>`
    + `<circle cx="${r2(px(a.xPx))}" cy="${r2(py(a.yPx))}" r="3" fill="${theme.selected}"/>`
    + text(x + w / 2, y + h + 13, 'the cut on the frame', theme, { size: 10, anchor: 'middle', fill: theme.muted })
    + '</g>';
}
