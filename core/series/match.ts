/**
 * Star by star across a series: frames may shift by a few pixels between exposures (tracking,
 * refocusing). The shift of each frame against a reference is the peak of the histogram of
 * position differences between their brightest stars (a vote over all pairs within the largest
 * shift allowed), refined by the median difference of the pairs at the peak; then every star of
 * the reference takes its nearest neighbour in the frame, when the two are each other's nearest
 * and closer than the tolerance.
 */
import type { Star } from '../stars/types.ts';

export interface MatchOptions {
  /** Largest shift between two frames, px. Default 40. */
  maxShiftPx?: number;
  /** Largest distance of a matched pair after the shift, px. Default 2.5. */
  tolerancePx?: number;
  /** Stars used for the vote (the brightest). Default 300. */
  voters?: number;
}

export interface FrameShift {
  dxPx: number;
  dyPx: number;
  /** Pairs of bright stars that agree with the shift, and how many bright stars the smaller frame had. */
  votes: number;
  of: number;
}

export interface SeriesMatch {
  /** Index of the reference frame (most clean stars). */
  reference: number;
  /** Per frame: its shift against the reference (reference position + shift = position in that frame). */
  shifts: FrameShift[];
  /** Per track, per frame: the star's index in that frame, or -1. Tracks follow the reference's stars. */
  tracks: Int32Array[];
}

const finite = (s: Star) => Number.isFinite(s.x) && Number.isFinite(s.y);

function brightest(stars: readonly Star[], n: number): number[] {
  const idx = stars.map((_, i) => i).filter((i) => finite(stars[i]) && stars[i].flags.length === 0);
  idx.sort((a, b) => (stars[b].flux || 0) - (stars[a].flux || 0));
  return idx.slice(0, n);
}

/** The shift of frame b against frame a, or null when too few bright stars line up. */
export function frameShift(a: readonly Star[], b: readonly Star[], opts: MatchOptions = {}): FrameShift | null {
  const R = opts.maxShiftPx ?? 40;
  const ia = brightest(a, opts.voters ?? 300);
  const ib = brightest(b, opts.voters ?? 300);
  const of = Math.min(ia.length, ib.length);
  if (of < 3) return null;
  const side = 2 * R + 1;
  const hist = new Int32Array(side * side);
  for (const i of ia) {
    for (const j of ib) {
      const dx = b[j].x - a[i].x, dy = b[j].y - a[i].y;
      if (Math.abs(dx) > R || Math.abs(dy) > R) continue;
      hist[(Math.round(dy) + R) * side + Math.round(dx) + R]++;
    }
  }
  // Peak of the 3 x 3 box sums (a shift near a bin edge splits its votes).
  let best = -1, bx = 0, by = 0;
  for (let y = 1; y < side - 1; y++) {
    for (let x = 1; x < side - 1; x++) {
      let s = 0;
      for (let q = -1; q <= 1; q++) for (let p = -1; p <= 1; p++) s += hist[(y + q) * side + x + p];
      if (s > best) { best = s; bx = x - R; by = y - R; }
    }
  }
  const dxs: number[] = [], dys: number[] = [];
  for (const i of ia) {
    for (const j of ib) {
      const dx = b[j].x - a[i].x, dy = b[j].y - a[i].y;
      if (Math.abs(dx - bx) <= 1.5 && Math.abs(dy - by) <= 1.5) { dxs.push(dx); dys.push(dy); }
    }
  }
  const med = (v: number[]) => { const s = [...v].sort((p, q) => p - q); return s.length ? s[s.length >> 1] : NaN; };
  return { dxPx: med(dxs), dyPx: med(dys), votes: dxs.length, of };
}

/**
 * Whether a shift is trustworthy: a fifth of the bright stars line up (chance pairs in a 3 x 3 px
 * box are about n_a n_b 9 / (2 R + 1)^2, a few per cent of n for the defaults).
 */
export function shiftAccepted(s: FrameShift | null): s is FrameShift {
  return !!s && Number.isFinite(s.dxPx) && s.votes >= Math.max(3, 0.2 * s.of);
}

/** Where a reference position lands in the frame: x' = c0 + c1 x + c2 y, y' = c3 + c4 x + c5 y. */
type Affine = Float64Array;

function shiftAffine(s: FrameShift): Affine {
  return Float64Array.of(s.dxPx, 1, 0, s.dyPx, 0, 1);
}

/**
 * Least-squares affine map from matched pairs (coordinates about the frame's mean position for
 * conditioning): takes up the small scale change of a non-telecentric beam through focus and a
 * small rotation. Null with fewer than 10 pairs.
 */
function fitAffine(a: readonly Star[], b: readonly Star[], pairs: Int32Array): Affine | null {
  const idx: number[] = [];
  pairs.forEach((j, i) => { if (j >= 0) idx.push(i); });
  if (idx.length < 10) return null;
  let mx = 0, my = 0;
  for (const i of idx) { mx += a[i].x; my += a[i].y; }
  mx /= idx.length; my /= idx.length;
  const M = new Float64Array(9);
  const bx = new Float64Array(3), by = new Float64Array(3);
  for (const i of idx) {
    const r = [1, a[i].x - mx, a[i].y - my];
    const j = pairs[i];
    for (let p = 0; p < 3; p++) {
      bx[p] += r[p] * b[j].x;
      by[p] += r[p] * b[j].y;
      for (let q = 0; q < 3; q++) M[p * 3 + q] += r[p] * r[q];
    }
  }
  const inv = invert3(M);
  if (!inv) return null;
  const cx = [0, 1, 2].map((p) => inv[p * 3] * bx[0] + inv[p * 3 + 1] * bx[1] + inv[p * 3 + 2] * bx[2]);
  const cy = [0, 1, 2].map((p) => inv[p * 3] * by[0] + inv[p * 3 + 1] * by[1] + inv[p * 3 + 2] * by[2]);
  return Float64Array.of(cx[0] - cx[1] * mx - cx[2] * my, cx[1], cx[2], cy[0] - cy[1] * mx - cy[2] * my, cy[1], cy[2]);
}

function invert3(m: Float64Array): Float64Array | null {
  const [a, b, c, d, e, f, g, h, i] = m;
  const A = e * i - f * h, B = -(d * i - f * g), C = d * h - e * g;
  const det = a * A + b * B + c * C;
  if (!(Math.abs(det) > 1e-12)) return null;
  return Float64Array.of(A / det, -(b * i - c * h) / det, (b * f - c * e) / det, B / det, (a * i - c * g) / det, -(a * f - c * d) / det, C / det, -(a * h - b * g) / det, (a * e - b * d) / det);
}

/** Mutual nearest neighbours within the tolerance, after the map. */
function matchPair(a: readonly Star[], b: readonly Star[], T: Affine, tol: number): Int32Array {
  const cell = Math.max(2, tol);
  const grid = new Map<number, number[]>();
  const key = (cx: number, cy: number) => cx * 100003 + cy;
  b.forEach((s, j) => {
    if (!finite(s)) return;
    const k = key(Math.floor(s.x / cell), Math.floor(s.y / cell));
    const l = grid.get(k);
    if (l) l.push(j); else grid.set(k, [j]);
  });
  const nearestIn = (x: number, y: number): [number, number] => {
    let bj = -1, bd = Infinity;
    const cx = Math.floor(x / cell), cy = Math.floor(y / cell);
    for (let q = -1; q <= 1; q++) {
      for (let p = -1; p <= 1; p++) {
        for (const j of grid.get(key(cx + p, cy + q)) ?? []) {
          const d = Math.hypot(b[j].x - x, b[j].y - y);
          if (d < bd) { bd = d; bj = j; }
        }
      }
    }
    return [bj, bd];
  };
  const forward = new Int32Array(a.length).fill(-1);
  const claim = new Map<number, { i: number; d: number }>();
  a.forEach((s, i) => {
    if (!finite(s)) return;
    const [j, d] = nearestIn(T[0] + T[1] * s.x + T[2] * s.y, T[3] + T[4] * s.x + T[5] * s.y);
    if (j < 0 || d > tol) return;
    const c = claim.get(j);
    if (!c || d < c.d) claim.set(j, { i, d });
  });
  for (const [j, c] of claim) forward[c.i] = j;
  return forward;
}

/**
 * Tracks across the series, following the reference frame's stars. Returns the frames whose
 * shift could not be found (a different field, or rotated) in `unmatched`.
 */
export function matchSeries(frames: readonly (readonly Star[])[], opts: MatchOptions = {}): SeriesMatch & { unmatched: { frame: number; shift: FrameShift | null }[] } {
  const clean = frames.map((f) => f.filter((s) => s.flags.length === 0 && finite(s)).length);
  let reference = 0;
  for (let k = 1; k < frames.length; k++) if (clean[k] > clean[reference]) reference = k;
  const ref = frames[reference];
  const shifts: FrameShift[] = [];
  const unmatched: { frame: number; shift: FrameShift | null }[] = [];
  const maps: Int32Array[] = [];
  for (let k = 0; k < frames.length; k++) {
    if (k === reference) {
      shifts.push({ dxPx: 0, dyPx: 0, votes: clean[k], of: clean[k] });
      maps.push(Int32Array.from(ref, (_, i) => i));
      continue;
    }
    const s = frameShift(ref, frames[k], opts);
    if (!shiftAccepted(s)) {
      unmatched.push({ frame: k, shift: s });
      shifts.push(s ?? { dxPx: NaN, dyPx: NaN, votes: 0, of: 0 });
      maps.push(new Int32Array(ref.length).fill(-1));
      continue;
    }
    shifts.push(s);
    const tol = opts.tolerancePx ?? 2.5;
    const first = matchPair(ref, frames[k], shiftAffine(s), tol + 1.5);
    const T = fitAffine(ref, frames[k], first) ?? shiftAffine(s);
    maps.push(matchPair(ref, frames[k], T, tol));
  }
  const tracks: Int32Array[] = [];
  for (let i = 0; i < ref.length; i++) {
    if (!finite(ref[i])) continue;
    tracks.push(Int32Array.from(maps, (m) => m[i]));
  }
  return { reference, shifts, tracks, unmatched };
}
