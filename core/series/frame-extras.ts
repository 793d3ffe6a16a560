/**
 * What a through-focus series needs from a frame's pixels besides the analysis: each clean star's
 * light radii (profile.ts) and small cut-outs of a few bright stars per region for the pictures.
 * Called right after a frame is analysed, so the pixels can be dropped before the next frame.
 */
import type { CfaPattern, Frame } from '../frame/types.ts';
import { toMeasurePlane } from '../frame/plane.ts';
import type { Star } from '../stars/types.ts';
import { apertureFor, PROFILE_FRACTIONS, starProfile, type StarProfile } from './profile.ts';

/** A square cut-out around a star, full-resolution frame coordinates of its first pixel. */
export interface StarStamp {
  /** Index of the star in its frame's star list. */
  readonly index: number;
  readonly x0: number;
  readonly y0: number;
  readonly w: number;
  readonly h: number;
  /** Measured-plane pixel values (px = scale full-resolution pixels), storage order; NaN = missing. */
  readonly values: Float32Array;
  /** Full-resolution pixels per stamp pixel (2 for colour-filter mosaics). */
  readonly scale: number;
}

export interface FrameExtras {
  /** Aligned with the analysis' stars: light radii in full-resolution px, or null (flagged or no room). */
  readonly profiles: (StarProfile | null)[];
  readonly stamps: StarStamp[];
}

/** Up to this many stamps per cell of a 3 x 3 grid (the brightest clean stars). */
const STAMPS_PER_CELL = 6;
const MAX_STAMP_HALF = 40;
/** Stars profiled per frame at most, and how far from the centre (half-diagonals) their light radii are measured. */
const MAX_STARS = 5000;
export const RADII_WITHIN = 0.6;

export function frameExtras(frame: Frame, analysis: { readonly stars: readonly Star[]; readonly frame: { readonly cfa: CfaPattern | null } }): FrameExtras {
  const plane = toMeasurePlane(frame, { cfa: analysis.frame.cfa });
  const k = plane.scale, off = plane.offset;
  const toPlane = (v: number) => (v - off) / k;
  // The light radii serve the spherical aberration, read near the centre (through-focus.ts: zones
  // within half the half-diagonal); every clean star gets its second moments. At most MAX_STARS
  // stars (the most significant) are profiled.
  const cx = (frame.width - 1) / 2, cy = (frame.height - 1) / 2, half = 0.5 * Math.hypot(frame.width, frame.height);
  const chosen = new Set(analysis.stars.map((s, i) => ({ s, i })).filter(({ s }) => s.flags.length === 0 && Number.isFinite(s.x) && Number.isFinite(s.y))
    .sort((a, b) => b.s.snr - a.s.snr).slice(0, MAX_STARS).map(({ i }) => i));
  const profiles = analysis.stars.map((s, i) => {
    if (!chosen.has(i)) return null;
    const x = toPlane(s.x), y = toPlane(s.y);
    const hfd = Number.isFinite(s.hfdPx) ? s.hfdPx / k : NaN;
    const rms = Math.sqrt(s.moments.ixx + s.moments.iyy) / k;
    const radii = Math.hypot(s.x - cx, s.y - cy) <= RADII_WITHIN * half;
    // First pass: the aperture from the pipeline's (robust) adaptive moments; then once more with
    // the aperture that follows the star's own half-light radius.
    let p = starProfile(plane.data, plane.width, plane.height, x, y, hfd, PROFILE_FRACTIONS, { rmsPx: rms });
    if (p && Number.isFinite(p.radiiPx[1])) p = starProfile(plane.data, plane.width, plane.height, x, y, 2 * p.radiiPx[1], PROFILE_FRACTIONS, { radii }) ?? p;
    if (!p) return null;
    return { ...p, radiiPx: p.radiiPx.map((r) => r * k), apertureRadiusPx: p.apertureRadiusPx * k, ixx: p.ixx * k * k, iyy: p.iyy * k * k, ixy: p.ixy * k * k };
  });
  // Stamps: the brightest clean stars in each ninth of the frame.
  const cells: number[][] = Array.from({ length: 9 }, () => []);
  analysis.stars.forEach((s, i) => {
    if (s.flags.length !== 0 || !Number.isFinite(s.x) || !Number.isFinite(s.y)) return;
    const cx = Math.min(2, Math.max(0, Math.floor((3 * (s.x + 0.5)) / frame.width)));
    const cy = Math.min(2, Math.max(0, Math.floor((3 * (s.y + 0.5)) / frame.height)));
    cells[cy * 3 + cx].push(i);
  });
  const stamps: StarStamp[] = [];
  for (const c of cells) {
    c.sort((a, b) => analysis.stars[b].snr - analysis.stars[a].snr);
    for (const i of c.slice(0, STAMPS_PER_CELL)) {
      const s = analysis.stars[i];
      const prof = profiles[i];
      const half = Math.min(MAX_STAMP_HALF, Math.ceil(apertureFor(prof ? 2 * prof.radiiPx[1] / k : s.hfdPx / k)));
      const px = Math.round(toPlane(s.x)), py = Math.round(toPlane(s.y));
      const xa = px - half, ya = py - half, n = 2 * half + 1;
      const values = new Float32Array(n * n).fill(NaN);
      for (let r = 0; r < n; r++) {
        const yy = ya + r;
        if (yy < 0 || yy >= plane.height) continue;
        for (let q = 0; q < n; q++) {
          const xx = xa + q;
          if (xx >= 0 && xx < plane.width) values[r * n + q] = plane.data[yy * plane.width + xx];
        }
      }
      stamps.push({ index: i, x0: k * xa + off, y0: k * ya + off, w: n, h: n, values, scale: k });
    }
  }
  return { profiles, stamps };
}
