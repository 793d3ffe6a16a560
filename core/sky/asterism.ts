/**
 * Asterisms of four stars described by a code that does not change with position, rotation and
 * scale (Lang, Hogg, Mierle, Blanton & Roweis 2010, AJ 139, 1782, section 2.1): the two stars
 * farthest apart, A and B, fix a frame in which A = (0, 0) and B = (1, 1); the other two, C and D,
 * must lie in the circle with diameter AB, and their coordinates (xC, yC, xD, yD) are the code.
 * The symmetries A<->B and C<->D are broken by xC <= xD and xC + xD <= 1. A mirrored image gives
 * the mirrored code, so each parity is looked up on its own.
 *
 * The index: for each band of asterism sizes, the catalogue is thinned to the brightest few stars
 * per sky cell (so every part of the sky has stars to match, as in section 2.2 there), and each
 * pair of index stars at a distance within the band forms asterisms with the brightest index
 * stars inside its circle. Codes are binned on a dense 3-D grid (xC, yC, xD) for lookups.
 */
import { brightnessRank, cellGrid, cellOf, cellsInCone, type Catalogue, type CellGrid } from './catalogue.ts';
import { DEG } from './sphere.ts';

/** Code of four points; false when C or D lies outside the circle on AB (not a valid asterism). */
export function quadCode(
  ax: number, ay: number, bx: number, by: number,
  cx: number, cy: number, dx: number, dy: number, out: Float64Array,
): boolean {
  const u = bx - ax, v = by - ay;
  const n2 = u * u + v * v;
  if (!(n2 > 0)) return false;
  // (x + iy) = (1 + i) (P - A) / (B - A)
  let pa = ((cx - ax) * u + (cy - ay) * v) / n2, pb = ((cy - ay) * u - (cx - ax) * v) / n2;
  let xc = pa - pb, yc = pa + pb;
  pa = ((dx - ax) * u + (dy - ay) * v) / n2; pb = ((dy - ay) * u - (dx - ax) * v) / n2;
  let xd = pa - pb, yd = pa + pb;
  // inside the circle of diameter AB: centre (1/2, 1/2), radius sqrt(2)/2
  if ((xc - 0.5) ** 2 + (yc - 0.5) ** 2 > 0.5 || (xd - 0.5) ** 2 + (yd - 0.5) ** 2 > 0.5) return false;
  if (xc + xd > 1) { xc = 1 - xc; yc = 1 - yc; xd = 1 - xd; yd = 1 - yd; }
  if (xc > xd) { let t = xc; xc = xd; xd = t; t = yc; yc = yd; yd = t; }
  out[0] = xc; out[1] = yc; out[2] = xd; out[3] = yd;
  return true;
}

/**
 * Which of the four points play A, B, C, D in the code of quadCode (after the symmetry breaking),
 * as indices 0..3 into the arguments (a, b, c, d).
 */
export function quadRoles(
  ax: number, ay: number, bx: number, by: number,
  cx: number, cy: number, dx: number, dy: number,
): [number, number, number, number] {
  const u = bx - ax, v = by - ay, n2 = u * u + v * v;
  let pa = ((cx - ax) * u + (cy - ay) * v) / n2, pb = ((cy - ay) * u - (cx - ax) * v) / n2;
  const xc = pa - pb;
  pa = ((dx - ax) * u + (dy - ay) * v) / n2; pb = ((dy - ay) * u - (dx - ax) * v) / n2;
  const xd = pa - pb;
  let A = 0, B = 1, C = 2, D = 3;
  let xC = xc, xD = xd;
  if (xC + xD > 1) { A = 1; B = 0; xC = 1 - xC; xD = 1 - xD; }
  if (xC > xD) { const t = C; C = D; D = t; }
  return [A, B, C, D];
}

/** Code space bins: codes lie in [-0.21, 1.21] on each axis. */
const CODE_LO = -0.21;
const CODE_SPAN = 1.42;
export const CODE_BIN = 0.03;
const NBIN = Math.ceil(CODE_SPAN / CODE_BIN);

function bin(v: number): number {
  const b = Math.floor((v - CODE_LO) / CODE_BIN);
  return b < 0 ? 0 : b >= NBIN ? NBIN - 1 : b;
}

export interface BandIndex {
  /** Asterism size range (A to B), radians. */
  readonly dLo: number;
  readonly dHi: number;
  /** Index stars: catalogue indices, brightest per cell, and their grid for cone queries. */
  readonly stars: Int32Array;
  readonly starGrid: CellGrid;
  readonly starCellStart: Int32Array;
  /** Index stars in cell order (positions into `stars`). */
  readonly starOrder: Int32Array;
  /** Per asterism: catalogue indices of A, B, C, D (code order) and the code. */
  readonly quads: Int32Array;
  readonly codes: Float32Array;
  /** Dense (xC, yC, xD) bins: first asterism of each bin in quads order. */
  readonly binStart: Int32Array;
  readonly count: number;
}

export interface IndexOptions {
  /** Index stars kept per cell (cells about dLo wide). */
  perCell: number;
  /** Asterisms per pair: from pairs of the brightest `innerStars` stars inside its circle. */
  innerStars: number;
  /** Asterisms per cell. */
  perCellQuads: number;
}

export const DEFAULT_INDEX: IndexOptions = { perCell: 6, innerStars: 3, perCellQuads: 8 };

/** Sky cell of catalogue star i. */
function cellOfStar(grid: CellGrid, xyz: Float64Array, i: number): number {
  const x = xyz[3 * i], y = xyz[3 * i + 1], z = xyz[3 * i + 2];
  let ra = Math.atan2(y, x) / DEG;
  if (ra < 0) ra += 360;
  return cellOf(grid, ra, Math.asin(Math.max(-1, Math.min(1, z))) / DEG);
}

/** Cell lists of the index stars: first entry of each cell, and the stars in cell order (their own order within a cell). */
function cellLists(grid: CellGrid, cellOfIndexStar: ArrayLike<number>): { starCellStart: Int32Array; starOrder: Int32Array } {
  const ns = cellOfIndexStar.length;
  const starCellStart = new Int32Array(grid.cells + 1);
  for (let s = 0; s < ns; s++) starCellStart[cellOfIndexStar[s] + 1]++;
  for (let c = 0; c < grid.cells; c++) starCellStart[c + 1] += starCellStart[c];
  const fillPos = starCellStart.slice(0, grid.cells);
  const starOrder = new Int32Array(ns);
  for (let s = 0; s < ns; s++) starOrder[fillPos[cellOfIndexStar[s]]++] = s;
  return { starCellStart, starOrder };
}

/** Dense bin of asterism q's code (xC, yC, xD). */
function codeKey(codes: Float32Array, q: number): number {
  return (bin(codes[4 * q]) * NBIN + bin(codes[4 * q + 1])) * NBIN + bin(codes[4 * q + 2]);
}

/** First asterism of each bin, from the asterisms' bins (counts, then running sums). */
function binStarts(keys: Int32Array): Int32Array {
  const nb = NBIN * NBIN * NBIN;
  const binStart = new Int32Array(nb + 1);
  for (let q = 0; q < keys.length; q++) binStart[keys[q] + 1]++;
  for (let b = 0; b < nb; b++) binStart[b + 1] += binStart[b];
  return binStart;
}

/** What a band stores: the rest of a BandIndex follows from it (bandFromStored). */
export interface StoredBand {
  readonly dLo: number;
  readonly dHi: number;
  readonly cellDeg: number;
  readonly stars: Int32Array;
  readonly quads: Int32Array;
  readonly codes: Float32Array;
}

/**
 * A band from its stored parts: the index stars' cell lists and the code bins are recomputed
 * by the same functions buildBandIndex uses, so they equal the built ones. null when the parts
 * do not fit together (a damaged or foreign file) or name stars the catalogue does not have.
 */
export function bandFromStored(cat: Catalogue, p: StoredBand): BandIndex | null {
  const grid = cellGrid(p.cellDeg);
  const count = p.quads.length / 4;
  if (grid.cellDeg !== p.cellDeg || !Number.isInteger(count) || p.codes.length !== p.quads.length) return null;
  for (let k = 0; k < p.stars.length; k++) if (!(p.stars[k] >= 0 && p.stars[k] < cat.count)) return null;
  for (let k = 0; k < p.quads.length; k++) if (!(p.quads[k] >= 0 && p.quads[k] < cat.count)) return null;
  const cells = new Int32Array(p.stars.length);
  for (let s = 0; s < cells.length; s++) cells[s] = cellOfStar(grid, cat.xyz, p.stars[s]);
  const { starCellStart, starOrder } = cellLists(grid, cells);
  const keys = new Int32Array(count);
  for (let q = 0; q < count; q++) {
    keys[q] = codeKey(p.codes, q);
    if (q > 0 && keys[q] < keys[q - 1]) return null; // stored in bin order
  }
  return { dLo: p.dLo, dHi: p.dHi, stars: p.stars, starGrid: grid, starCellStart, starOrder, quads: p.quads, codes: p.codes, binStart: binStarts(keys), count };
}

function magOrder(cat: Catalogue): Int32Array {
  return brightnessRank(cat).byRank;
}

/** Build the asterism index of one size band [dLo, dHi] (radians). */
export function buildBandIndex(cat: Catalogue, dLo: number, dHi: number, opt: IndexOptions = DEFAULT_INDEX): BandIndex {
  // 1. thin the catalogue: the brightest perCell stars of each cell about dLo wide
  const grid = cellGrid(Math.min(30, Math.max(0.05, dLo / DEG)));
  const order = magOrder(cat);
  const filled = new Int32Array(grid.cells);
  const picked: number[] = [];
  const pickedCell: number[] = [];
  const xyz = cat.xyz;
  for (let k = 0; k < order.length; k++) {
    const i = order[k];
    const c = cellOfStar(grid, xyz, i);
    if (filled[c] >= opt.perCell) continue;
    filled[c]++;
    picked.push(i);
    pickedCell.push(c);
  }
  const stars = Int32Array.from(picked);
  const ns = stars.length;
  const { starCellStart, starOrder } = cellLists(grid, pickedCell);

  // 2. asterisms: in each cell, pairs of index stars (brightest first) at a distance within the band
  // whose midpoint lies in the cell, with the brightest index stars inside their circle, until the
  // cell has its share (as section 2.2 there: a few asterisms per cell, built from bright stars)
  let cap = Math.max(1024, Math.min(grid.cells, ns) * opt.perCellQuads);
  let quadList = new Int32Array(4 * cap);
  let codeList = new Float32Array(4 * cap);
  let nq = 0;
  const candBuf = new Int32Array(4096);
  const code = new Float64Array(4);
  const cellBuf: number[] = [];
  const inside: number[] = [];
  const cosHi = Math.cos(dHi), cosLo = Math.cos(dLo);
  const h = grid.cellDeg;
  const MAXC = 64;
  const px = new Float64Array(MAXC), py = new Float64Array(MAXC);
  const cx = new Float64Array(MAXC), cy = new Float64Array(MAXC), cz = new Float64Array(MAXC);
  const isOwn = new Uint8Array(MAXC);
  const ringH = h * DEG;
  for (let ring = 0; ring < grid.rings; ring++) {
    const decC = (-90 + (ring + 0.5) * h) * DEG;
    const nRa = grid.perRing[ring];
    // a cell's half-diagonal, bounded above (RA width at the ring edge nearest the equator)
    const lo = -90 + ring * h, hi = lo + h;
    const cosNear = lo <= 0 && hi >= 0 ? 1 : Math.cos(Math.min(Math.abs(lo), Math.abs(hi)) * DEG);
    const halfDiag = 0.5 * Math.hypot(ringH, (2 * Math.PI / nRa) * cosNear);
    const reach = dHi + halfDiag;
    const cosR = Math.cos(Math.min(Math.PI, reach));
    for (let cr = 0; cr < nRa; cr++) {
      const cell = grid.ringStart[ring] + cr;
      const own = starCellStart[cell + 1] - starCellStart[cell];
      if (own === 0) continue;
      const raC = ((cr + 0.5) / nRa) * 2 * Math.PI;
      cellsInCone(grid, raC, decC, reach, cellBuf);
      const c0 = Math.cos(decC) * Math.cos(raC), c1 = Math.cos(decC) * Math.sin(raC), c2 = Math.sin(decC);
      let nc = 0;
      for (const c of cellBuf) {
        for (let k = starCellStart[c]; k < starCellStart[c + 1] && nc < candBuf.length; k++) {
          const s = starOrder[k];
          const j = stars[s];
          if (xyz[3 * j] * c0 + xyz[3 * j + 1] * c1 + xyz[3 * j + 2] * c2 >= cosR) candBuf[nc++] = s;
        }
      }
      if (nc < 4) continue;
      const cand = candBuf.subarray(0, nc).sort(); // picked order = brightness order
      const n = Math.min(nc, MAXC);
      for (let k = 0; k < n; k++) {
        const j = stars[cand[k]];
        cx[k] = xyz[3 * j]; cy[k] = xyz[3 * j + 1]; cz[k] = xyz[3 * j + 2];
        isOwn[k] = pickedCell[cand[k]] === cell ? 1 : 0;
      }
      let made = 0;
      // pairs belong to the cell of their brighter star A; fainter B in brightness order
      for (let jb = 1; jb < n && made < opt.perCellQuads; jb++) {
        for (let ia = 0; ia < jb && made < opt.perCellQuads; ia++) {
          if (!isOwn[ia]) continue;
          const cab = cx[ia] * cx[jb] + cy[ia] * cy[jb] + cz[ia] * cz[jb];
          if (cab > cosLo || cab < cosHi) continue;
          let mx = cx[ia] + cx[jb], my = cy[ia] + cy[jb], mz = cz[ia] + cz[jb];
          const mn = Math.hypot(mx, my, mz);
          mx /= mn; my /= mn; mz /= mn;
          // tangent plane at the midpoint: east = z x m normalised, north = m x east
          let ex = -my, ey = mx;
          const en = Math.hypot(ex, ey);
          if (en < 1e-12) { ex = 0; ey = 1; } else { ex /= en; ey /= en; }
          const nx = -mz * ey, ny = mz * ex, nz = mx * ey - my * ex;
          for (let k = 0; k < n; k++) {
            const d = cx[k] * mx + cy[k] * my + cz[k] * mz;
            if (d <= 1e-9) { px[k] = 1e9; py[k] = 1e9; continue; }
            px[k] = (cx[k] * ex + cy[k] * ey) / d;
            py[k] = (cx[k] * nx + cy[k] * ny + cz[k] * nz) / d;
          }
          const r2 = ((px[ia] - px[jb]) ** 2 + (py[ia] - py[jb]) ** 2) / 4;
          inside.length = 0;
          for (let k = 0; k < n && inside.length < opt.innerStars; k++) {
            if (k === ia || k === jb) continue;
            if (px[k] * px[k] + py[k] * py[k] < r2 * 0.999) inside.push(k);
          }
          for (let i1 = 0; i1 < inside.length && made < opt.perCellQuads; i1++) {
            for (let i2 = i1 + 1; i2 < inside.length && made < opt.perCellQuads; i2++) {
              const kc = inside[i1], kd = inside[i2];
              if (!quadCode(px[ia], py[ia], px[jb], py[jb], px[kc], py[kc], px[kd], py[kd], code)) continue;
              const roles = quadRoles(px[ia], py[ia], px[jb], py[jb], px[kc], py[kc], px[kd], py[kd]);
              if (nq === cap) {
                cap *= 2;
                const ql = new Int32Array(4 * cap); ql.set(quadList); quadList = ql;
                const cl = new Float32Array(4 * cap); cl.set(codeList); codeList = cl;
              }
              const ids = [stars[cand[ia]], stars[cand[jb]], stars[cand[kc]], stars[cand[kd]]];
              for (let r = 0; r < 4; r++) { quadList[4 * nq + r] = ids[roles[r]]; codeList[4 * nq + r] = code[r]; }
              nq++;
              made++;
            }
          }
        }
      }
    }
  }
  // 3. bin the codes
  const keys = new Int32Array(nq);
  for (let q = 0; q < nq; q++) keys[q] = codeKey(codeList, q);
  const binStart = binStarts(keys);
  const pos = binStart.slice(0, NBIN * NBIN * NBIN);
  const quads = new Int32Array(4 * nq);
  const codes = new Float32Array(4 * nq);
  for (let q = 0; q < nq; q++) {
    const t = pos[keys[q]]++;
    for (let k = 0; k < 4; k++) { quads[4 * t + k] = quadList[4 * q + k]; codes[4 * t + k] = codeList[4 * q + k]; }
  }
  return { dLo, dHi, stars, starGrid: grid, starCellStart, starOrder, quads, codes, binStart, count: nq };
}

/**
 * Asterisms whose code lies within `tol` (each axis, and in 4-D distance) of the code: calls
 * `hit(q, dist2)` with the asterism's position in the band. tol must not exceed CODE_BIN / 2... it
 * may: all bins the box touches are searched.
 */
export function lookupCode(ix: BandIndex, code: ArrayLike<number>, tol: number, hit: (q: number, d2: number) => void): void {
  const t2 = tol * tol;
  const b0 = bin(code[0] - tol), b0e = bin(code[0] + tol);
  const b1 = bin(code[1] - tol), b1e = bin(code[1] + tol);
  const b2 = bin(code[2] - tol), b2e = bin(code[2] + tol);
  const c = ix.codes;
  for (let i = b0; i <= b0e; i++) {
    for (let j = b1; j <= b1e; j++) {
      for (let k = b2; k <= b2e; k++) {
        const key = (i * NBIN + j) * NBIN + k;
        for (let q = ix.binStart[key]; q < ix.binStart[key + 1]; q++) {
          const d0 = c[4 * q] - code[0], d1 = c[4 * q + 1] - code[1], d2 = c[4 * q + 2] - code[2], d3 = c[4 * q + 3] - code[3];
          const dd = d0 * d0 + d1 * d1 + d2 * d2 + d3 * d3;
          if (dd <= t2) hit(q, dd);
        }
      }
    }
  }
}

/** Index stars (catalogue indices) within radiusRad of a direction, brightest first. */
export function indexStarsInCone(ix: BandIndex, cat: Catalogue, centre: ArrayLike<number>, radiusRad: number, out: number[] = []): number[] {
  out.length = 0;
  let ra = Math.atan2(centre[1], centre[0]);
  if (ra < 0) ra += 2 * Math.PI;
  const cells = cellsInCone(ix.starGrid, ra, Math.asin(Math.max(-1, Math.min(1, centre[2]))), radiusRad);
  const cosR = Math.cos(radiusRad);
  const seen = new Set<number>();
  const sel: number[] = [];
  for (const c of cells) {
    if (seen.has(c)) continue;
    seen.add(c);
    for (let k = ix.starCellStart[c]; k < ix.starCellStart[c + 1]; k++) {
      const s = ix.starOrder[k];
      const i = ix.stars[s];
      if (cat.xyz[3 * i] * centre[0] + cat.xyz[3 * i + 1] * centre[1] + cat.xyz[3 * i + 2] * centre[2] >= cosR) sel.push(s);
    }
  }
  sel.sort((a, b) => a - b);
  for (const s of sel) out.push(ix.stars[s]);
  return out;
}
