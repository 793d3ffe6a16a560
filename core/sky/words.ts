/** The plate solution as short lines for the CLI summary and the HTML table (one wording for both). */
import type { AstrometrySection } from './section-types.ts';

/** RA as h m s and Dec as d m s (sexagesimal, the usual way to write them). */
export function sexagesimal(raDeg: number, decDeg: number): string {
  let t = ((raDeg % 360) + 360) % 360 / 15;
  const h = Math.floor(t); t = (t - h) * 60;
  const m = Math.floor(t); let s = (t - m) * 60;
  let hh = h, mm = m;
  if (s >= 59.995) { s = 0; mm++; if (mm === 60) { mm = 0; hh = (hh + 1) % 24; } }
  const sign = decDeg < 0 ? '-' : '+';
  let a = Math.abs(decDeg);
  const d = Math.floor(a); a = (a - d) * 60;
  const am = Math.floor(a); let as = (a - am) * 60;
  let dd = d, amm = am;
  if (as >= 59.95) { as = 0; amm++; if (amm === 60) { amm = 0; dd++; } }
  const p2 = (v: number) => String(v).padStart(2, '0');
  return `${p2(hh)}h${p2(mm)}m${s.toFixed(2).padStart(5, '0')}s ${sign}${p2(dd)}°${p2(amm)}'${as.toFixed(1).padStart(4, '0')}"`;
}

const PROJ: Record<string, string> = {
  rectilinear: 'rectilinear',
  'fisheye-equidistant': 'equidistant fisheye',
  'fisheye-equisolid': 'equisolid-angle fisheye',
  'fisheye-stereographic': 'stereographic fisheye',
};

export function projectionWords(p: string | null): string {
  return p ? PROJ[p] ?? p : 'unknown';
}

const sgn = (v: number, d = 2) => (v > 0 ? '+' : '') + v.toFixed(d);

export function skySummaryLines(s: AstrometrySection): string[] {
  if (!s.solved) return [`sky: not placed on the sky: ${s.reason}`];
  const lines: string[] = [];
  const c = s.centre;
  const where = c ? `${sexagesimal(c.raDeg, c.decDeg)} (RA ${c.raDeg.toFixed(4)}°, Dec ${sgn(c.decDeg, 4)}°)` : 'centre outside the lens model';
  const f = s.focalLengthMm !== null ? `, focal length ${s.focalLengthMm.toFixed(2)} mm` : '';
  lines.push(`sky: centre ${where}, north at ${s.rotationDeg?.toFixed(1)}° from +x, ${s.parity} parity; ${s.scaleArcsecPerPx?.toFixed(3)}"/px${f}, ${projectionWords(s.projection)}`);
  lines.push(`     ${s.starsMatched} stars matched to ${s.catalogue.name}, rms ${s.rmsArcsec?.toFixed(2)}" (${s.rmsPx?.toFixed(2)} px)${s.search.mode === 'blind' ? '; found by the search over all scales' : ''}`);
  const d = s.distortion;
  if (d) {
    const pat = d.pattern === 'none' ? 'no significant distortion' : d.pattern;
    lines.push(`lens: ${pat}, ${sgn(d.cornerPercent)} %${d.cornerPercentErr !== null ? ` ± ${d.cornerPercentErr.toFixed(2)}` : ''} at the corners (${sgn(d.edgePercent.x)} % / ${sgn(d.edgePercent.y)} % at the side / top edges), largest shift ${d.maxShiftPx.toFixed(1)} px`);
  }
  for (const n of s.notes.filter((n) => n.startsWith('the stars put') || n.startsWith('focal length measured') || n.startsWith('sky scale'))) lines.push(`note: ${n}`);
  return lines;
}
