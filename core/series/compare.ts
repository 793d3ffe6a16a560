/**
 * compare A B: two frames of the same field and camera through two lenses or settings. Per zone
 * (centre, edges, corners of the 3x3 grid) the median star FWHM of each frame, in arcsec when
 * both plate scales are known (so different focal lengths compare fairly, optics.md section 7),
 * and a verdict: the smaller wins when the difference is significant (>= 3 sigma) and matters
 * (>= 3 %), else a tie. Elongation (vector-averaged distortion) is reported beside it.
 */
import { starColumns } from '../field/quantities.ts';
import { clippedMean, medianWithErr } from '../field/stats.ts';
import { ellipticityFromDistortion } from '../report/shared-ellipticity.ts';
import type { Finding } from '../diagnose/types.ts';
import { fmt } from '../diagnose/words.ts';
import { checkFrame, checkSameSetup, fromAnalysis, type AnalysisLike, type FrameIdentity, type FrameInput } from './input.ts';

export type ZoneName = 'center' | 'edges' | 'corners';
export type Better = 'A' | 'B' | 'tie';

export interface ZoneValue {
  n: number;
  fwhm: number | null;
  fwhmErr: number | null;
  /** Mean modulus of the per-cell vector-averaged distortion e over the zone's cells. */
  elongation: number | null;
  /** The same per cell as an ellipticity 1 - b/a, averaged over the cells: the shared ellipticity (core/report/words.ts). */
  sharedEllipticity: number | null;
}

export interface ZoneVerdict {
  better: Better;
  a: ZoneValue;
  b: ZoneValue;
  /** (B - A) / A in percent: positive = B larger (A better). */
  differencePct: number | null;
  differenceErrPct: number | null;
  /** |A - B| in units of the combined error. */
  significance: number;
  note: string | null;
}

export interface CompareResult {
  schema: 'skyloupe.compare/1';
  unit: 'arcsec' | 'px';
  labels: { A: string; B: string };
  zones: Record<ZoneName, ZoneVerdict>;
  notes: string[];
  findings: Finding[];
}

const SIGMA = 3;
const MIN_PCT = 3;

function zoneOf(x: number, y: number, w: number, h: number): ZoneName {
  const c = Math.min(2, Math.max(0, Math.floor(((x + 0.5) * 3) / w)));
  const r = Math.min(2, Math.max(0, Math.floor(((y + 0.5) * 3) / h)));
  if (c === 1 && r === 1) return 'center';
  if (c === 1 || r === 1) return 'edges';
  return 'corners';
}

function zoneValues(f: FrameInput, scale: number): Record<ZoneName, ZoneValue> {
  const cols = starColumns(f.stars);
  const out = {} as Record<ZoneName, ZoneValue>;
  const cell = (i: number) => Math.min(2, Math.max(0, Math.floor(((cols.x[i] + 0.5) * 3) / f.width))) + 3 * Math.min(2, Math.max(0, Math.floor(((cols.y[i] + 0.5) * 3) / f.height)));
  for (const z of ['center', 'edges', 'corners'] as ZoneName[]) {
    const fw: number[] = [];
    const cells = new Map<number, { e1: number[]; e2: number[] }>();
    for (let i = 0; i < cols.n; i++) {
      if (zoneOf(cols.x[i], cols.y[i], f.width, f.height) !== z) continue;
      fw.push(cols.fwhm[i] * scale);
      const k = cell(i);
      if (!cells.has(k)) cells.set(k, { e1: [], e2: [] });
      cells.get(k)!.e1.push(cols.e1[i]);
      cells.get(k)!.e2.push(cols.e2[i]);
    }
    const m = medianWithErr(fw);
    const el = [...cells.values()].filter((c) => c.e1.length >= 3).map((c) => Math.hypot(clippedMean(c.e1).mean, clippedMean(c.e2).mean));
    out[z] = {
      n: fw.length,
      fwhm: Number.isFinite(m.value) ? m.value : null,
      fwhmErr: Number.isFinite(m.err) ? m.err : null,
      elongation: el.length ? el.reduce((s, v) => s + v, 0) / el.length : null,
      sharedEllipticity: el.length ? el.reduce((s, v) => s + ellipticityFromDistortion(v), 0) / el.length : null,
    };
  }
  return out;
}

export function compareFrames(a: FrameInput, b: FrameInput): CompareResult {
  checkFrame(a, 'compare A');
  checkFrame(b, 'compare B');
  // Two lenses on one camera: sizes, cameras and identical frames are refused; plate scales may
  // differ (compared in arcsec) up to a factor 2, beyond which the sizes mostly measure focal length.
  const notes = checkSameSetup('compare', [a, b], ['A', 'B'], { scaleTolerance: null, scaleRatioLimit: 2 });
  const psA = a.optics.plateScaleArcsecPerPx;
  const psB = b.optics.plateScaleArcsecPerPx;
  const arcsec = typeof psA === 'number' && typeof psB === 'number' && psA > 0 && psB > 0;
  if (!arcsec) {
    notes.push('sizes are compared in pixels because a plate scale is unknown; with different focal lengths, give them so the comparison is in arcsec');
  }
  const nA = a.optics.fNumber;
  const nB = b.optics.fNumber;
  if (nA && nB && Math.abs(nA - nB) / nA > 0.05) notes.push(`the f-numbers differ (f/${fmt(nA, 1)} and f/${fmt(nB, 1)}): a fair lens test compares at equal f-number`);
  const va = zoneValues(a, arcsec ? (psA as number) : 1);
  const vb = zoneValues(b, arcsec ? (psB as number) : 1);
  const zones = {} as Record<ZoneName, ZoneVerdict>;
  for (const z of ['center', 'edges', 'corners'] as ZoneName[]) {
    const A = va[z];
    const B = vb[z];
    if (A.fwhm === null || B.fwhm === null || A.n < 3 || B.n < 3) {
      zones[z] = { better: 'tie', a: A, b: B, differencePct: null, differenceErrPct: null, significance: 0, note: 'too few stars in this zone in one of the frames' };
      continue;
    }
    const err = Math.hypot(A.fwhmErr ?? Infinity, B.fwhmErr ?? Infinity);
    const d = B.fwhm - A.fwhm;
    const sig = Math.abs(d) / err;
    const pct = (100 * d) / A.fwhm;
    const pctErr = (100 * err) / A.fwhm;
    const better: Better = sig >= SIGMA && Math.abs(pct) >= MIN_PCT ? (d > 0 ? 'A' : 'B') : 'tie';
    zones[z] = { better, a: A, b: B, differencePct: pct, differenceErrPct: pctErr, significance: sig, note: null };
  }
  const labels = { A: a.label ?? 'A', B: b.label ?? 'B' };
  const unit = arcsec ? 'arcsec' : 'px';
  const findings: Finding[] = (['center', 'edges', 'corners'] as ZoneName[]).map((z) => {
    const v = zones[z];
    const where = z === 'center' ? 'In the centre' : z === 'edges' ? 'At the edges' : 'In the corners';
    const sizes = `${labels.A} ${fmt(v.a.fwhm, 2)} ${unit}, ${labels.B} ${fmt(v.b.fwhm, 2)} ${unit}`;
    const message = v.better === 'tie'
      ? `${where} the two are alike (${sizes}; difference ${fmt(v.differencePct, 1)} ± ${fmt(v.differenceErrPct, 1)} %, within the noise or under ${MIN_PCT} %).`
      : `${where} ${v.better === 'A' ? labels.A : labels.B} is sharper: ${sizes} (${fmt(Math.abs(v.differencePct ?? 0), 1)} ± ${fmt(v.differenceErrPct, 1)} %, ${fmt(v.significance, 1)} sigma).`;
    return { code: `COMPARE_${z.toUpperCase()}`, severity: 'info' as const, message, numbers: { better: v.better, a: v.a.fwhm, b: v.b.fwhm, differencePct: v.differencePct, significance: v.significance } };
  });
  return { schema: 'skyloupe.compare/1', unit, labels, zones, notes, findings };
}

/** CLI-facing: compare two analyses. */
export function runCompare(a: AnalysisLike, b: AnalysisLike, labels: { A?: string; B?: string } = {}, ids: { A?: FrameIdentity | null; B?: FrameIdentity | null } = {}): CompareResult {
  return compareFrames(fromAnalysis(a, labels.A, ids.A), fromAnalysis(b, labels.B, ids.B));
}

export function formatCompare(r: CompareResult): string {
  const lines = [`Compare ${r.labels.A} (A) with ${r.labels.B} (B), median FWHM in ${r.unit}:`];
  for (const z of ['center', 'edges', 'corners'] as ZoneName[]) {
    const v = r.zones[z];
    lines.push(`  ${z.padEnd(8)} A ${fmt(v.a.fwhm, 2).padStart(6)}  B ${fmt(v.b.fwhm, 2).padStart(6)}  better: ${v.better === 'tie' ? 'tie' : v.better}${v.note ? ` (${v.note})` : ''}`);
  }
  for (const n of r.notes) lines.push(`  note: ${n}`);
  return lines.join('\n');
}
