/**
 * A star catalogue in skyloupe's compact binary (sorted by sky cell, brightest first in each
 * cell), its loader and cone queries. The bundled one is Hipparcos as the npm package
 * d3-celestial ships it (bin/build-catalogue.ts); a user's deeper catalogue in the same format
 * can be made from astrometry.net index files (astrometry-index.ts).
 *
 * Layout (little-endian): 8-byte magic "SLCAT01\0", uint32 length of a UTF-8 JSON header, the
 * header, zero padding to a multiple of 4, then per star in cell order: uint32 RA
 * (RA / 360 deg * 2^32), int32 Dec (Dec / 180 deg * 2^32), int16 magnitude * 1000 (32767 =
 * unknown), uint32 catalogue number (0 = none). Cells: declination rings `cellDeg` high, each cut
 * into ceil(360 cos(dec nearest the equator) / cellDeg) equal RA cells, numbered from the south
 * pole and RA 0; the cell starts follow the stars (uint32, cells + 1 of them).
 */
import { SkyloupeError } from '../errors.ts';
import { DEG, type Vec3 } from './sphere.ts';

const MAGIC = 'SLCAT01\0';
export const MAG_UNKNOWN = 32.767;

export interface CatalogueInfo {
  /** Short name shown in reports, e.g. "Hipparcos (d3-celestial)". */
  name: string;
  /** Where the data came from and its licence. */
  source: string;
  /** Prefix of the catalogue numbers ("HIP"), or "" when the stars carry none. */
  idPrefix: string;
  /** Reference epoch of the positions (J2000 = 2000). */
  epoch: number;
  /** Stated position rounding or accuracy, arcsec. */
  positionErrorArcsec: number;
  /** Magnitude band, e.g. "V" or "VT". */
  band: string;
  cellDeg: number;
  count: number;
  /** Labels for a few stars: proper names or designations, by catalogue number. */
  names?: Record<string, string>;
}

export interface Catalogue {
  readonly info: CatalogueInfo;
  readonly count: number;
  /** Unit vectors, 3 per star. */
  readonly xyz: Float64Array;
  readonly mag: Float32Array;
  readonly id: Uint32Array;
  /** First star of each cell; cellStart[cells] = count. */
  readonly cellStart: Uint32Array;
  readonly grid: CellGrid;
  /** A short digest of the catalogue's bytes (keys the band cache); absent = not cached. */
  readonly fingerprint?: string;
}

/** Declination rings cut into RA cells of about `cellDeg` square. */
export interface CellGrid {
  readonly cellDeg: number;
  readonly rings: number;
  /** RA cells per ring and the first cell of each ring. */
  readonly perRing: Int32Array;
  readonly ringStart: Int32Array;
  readonly cells: number;
}

export function cellGrid(cellDeg: number): CellGrid {
  const rings = Math.max(1, Math.round(180 / cellDeg));
  const h = 180 / rings;
  const perRing = new Int32Array(rings);
  const ringStart = new Int32Array(rings + 1);
  for (let b = 0; b < rings; b++) {
    const lo = -90 + b * h, hi = lo + h;
    const nearest = lo <= 0 && hi >= 0 ? 0 : Math.min(Math.abs(lo), Math.abs(hi));
    perRing[b] = Math.max(1, Math.ceil((360 * Math.cos(nearest * DEG)) / h));
    ringStart[b + 1] = ringStart[b] + perRing[b];
  }
  return { cellDeg: h, rings, perRing, ringStart, cells: ringStart[rings] };
}

export function cellOf(g: CellGrid, raDeg: number, decDeg: number): number {
  let b = Math.floor((decDeg + 90) / g.cellDeg);
  if (b < 0) b = 0;
  if (b >= g.rings) b = g.rings - 1;
  let ra = raDeg % 360;
  if (ra < 0) ra += 360;
  let c = Math.floor((ra / 360) * g.perRing[b]);
  if (c >= g.perRing[b]) c = g.perRing[b] - 1;
  return g.ringStart[b] + c;
}

/**
 * Cells that may hold stars within `radiusRad` of the direction (raRad, decRad): the rings the
 * cap crosses, and in each the RA span of the cap (all of it near a pole).
 */
export function cellsInCone(g: CellGrid, raRad: number, decRad: number, radiusRad: number, out: number[] = []): number[] {
  out.length = 0;
  const decLo = (decRad - radiusRad) / DEG, decHi = (decRad + radiusRad) / DEG;
  const b0 = Math.max(0, Math.floor((decLo + 90) / g.cellDeg));
  const b1 = Math.min(g.rings - 1, Math.floor((decHi + 90) / g.cellDeg));
  // the largest RA offset over the whole cap: asin(sin r / cos dec0) (spherical triangle
  // pole-centre-tangent point); the cap holds a pole when |dec0| + r >= 90 deg
  const half = Math.abs(decRad) + radiusRad >= Math.PI / 2 ? Math.PI : Math.asin(Math.min(1, Math.sin(radiusRad) / Math.cos(decRad))) * 1.0001 + 1e-9;
  for (let b = b0; b <= b1; b++) {
    const n = g.perRing[b];
    if (half >= Math.PI) {
      for (let c = 0; c < n; c++) out.push(g.ringStart[b] + c);
      continue;
    }
    const raDeg = raRad / DEG, w = half / DEG;
    const c0 = Math.floor((((raDeg - w) / 360) * n));
    const c1 = Math.floor((((raDeg + w) / 360) * n));
    if (c1 - c0 + 1 >= n) { for (let c = 0; c < n; c++) out.push(g.ringStart[b] + c); continue; }
    for (let c = c0; c <= c1; c++) out.push(g.ringStart[b] + (((c % n) + n) % n));
  }
  return out;
}

export interface CatalogueStar {
  raDeg: number;
  decDeg: number;
  mag: number;
  id: number;
}

/** Sort stars into cells (brightest first within a cell) and write the binary. */
export function encodeCatalogue(stars: readonly CatalogueStar[], info: Omit<CatalogueInfo, 'count'>): Uint8Array {
  const g = cellGrid(info.cellDeg);
  const cells = stars.map((s) => cellOf(g, s.raDeg, s.decDeg));
  const order = stars.map((_, i) => i).sort((a, b) => cells[a] - cells[b] || stars[a].mag - stars[b].mag || stars[a].id - stars[b].id || a - b);
  const header = new TextEncoder().encode(JSON.stringify({ ...info, cellDeg: g.cellDeg, count: stars.length }));
  const headPad = (4 - ((12 + header.length) % 4)) % 4;
  const n = stars.length;
  const body = 12 + header.length + headPad;
  const size = body + n * 4 + n * 4 + ((n * 2 + 3) & ~3) + n * 4 + (g.cells + 1) * 4;
  const buf = new Uint8Array(size);
  const dv = new DataView(buf.buffer);
  for (let i = 0; i < 8; i++) buf[i] = MAGIC.charCodeAt(i);
  dv.setUint32(8, header.length, true);
  buf.set(header, 12);
  let o = body;
  const cellStart = new Uint32Array(g.cells + 1);
  for (const i of order) cellStart[cells[i] + 1]++;
  for (let c = 0; c < g.cells; c++) cellStart[c + 1] += cellStart[c];
  for (const i of order) { dv.setUint32(o, Math.round((((stars[i].raDeg % 360) + 360) % 360) / 360 * 2 ** 32) >>> 0, true); o += 4; }
  for (const i of order) { dv.setInt32(o, Math.max(-(2 ** 31), Math.min(2 ** 31 - 1, Math.round((stars[i].decDeg / 180) * 2 ** 32))), true); o += 4; }
  for (const i of order) {
    const m = stars[i].mag;
    dv.setInt16(o, Number.isFinite(m) ? Math.max(-32768, Math.min(32766, Math.round(m * 1000))) : 32767, true);
    o += 2;
  }
  o = (o + 3) & ~3;
  for (const i of order) { dv.setUint32(o, stars[i].id >>> 0, true); o += 4; }
  for (let c = 0; c <= g.cells; c++) { dv.setUint32(o, cellStart[c], true); o += 4; }
  return buf;
}

function bad(what: string): never {
  throw new SkyloupeError('unreadable', `star catalogue: ${what}`);
}

/** Read the binary; a truncated or foreign file gets a clear message. */
export function decodeCatalogue(bytes: Uint8Array): Catalogue {
  if (bytes.length < 12) bad('file too short to be a skyloupe catalogue');
  for (let i = 0; i < 8; i++) if (bytes[i] !== MAGIC.charCodeAt(i)) bad('not a skyloupe catalogue (make one with skyloupe catalogue)');
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const hl = dv.getUint32(8, true);
  if (12 + hl > bytes.length) bad('truncated header');
  let info: CatalogueInfo;
  try {
    info = JSON.parse(new TextDecoder().decode(bytes.subarray(12, 12 + hl)));
  } catch {
    bad('unreadable header');
  }
  const n = info.count;
  if (!Number.isInteger(n) || n < 0 || !(info.cellDeg > 0) || info.cellDeg > 90) bad('header has no valid star count or cell size');
  const g = cellGrid(info.cellDeg);
  let o = 12 + hl;
  o += (4 - (o % 4)) % 4;
  const need = o + n * 4 + n * 4 + ((n * 2 + 3) & ~3) + n * 4 + (g.cells + 1) * 4;
  if (bytes.length < need) bad(`truncated: ${bytes.length} bytes, ${need} needed for ${n} stars`);
  // aligned copies of the arrays (little-endian platforms read them directly)
  const le = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
  const u32 = (off: number, count: number) => le ? new Uint32Array(bytes.slice(off, off + 4 * count).buffer) : Uint32Array.from({ length: count }, (_, i) => dv.getUint32(off + 4 * i, true));
  const i32 = (off: number, count: number) => le ? new Int32Array(bytes.slice(off, off + 4 * count).buffer) : Int32Array.from({ length: count }, (_, i) => dv.getInt32(off + 4 * i, true));
  const i16 = (off: number, count: number) => le ? new Int16Array(bytes.slice(off, off + 2 * count).buffer) : Int16Array.from({ length: count }, (_, i) => dv.getInt16(off + 2 * i, true));
  const raU = u32(o, n), decI = i32(o + 4 * n, n);
  o += 8 * n;
  const magI = i16(o, n);
  o += (n * 2 + 3) & ~3;
  const id = u32(o, n);
  o += 4 * n;
  const cellStart = u32(o, g.cells + 1);
  const xyz = new Float64Array(3 * n);
  const mag = new Float32Array(n);
  const raScale = (2 * Math.PI) / 2 ** 32, decScale = Math.PI / 2 ** 32;
  for (let i = 0; i < n; i++) {
    const ra = raU[i] * raScale, dec = decI[i] * decScale;
    const c = Math.cos(dec);
    xyz[3 * i] = c * Math.cos(ra);
    xyz[3 * i + 1] = c * Math.sin(ra);
    xyz[3 * i + 2] = Math.sin(dec);
    const m = magI[i];
    mag[i] = m === 32767 ? MAG_UNKNOWN : m / 1000;
  }
  if (cellStart[g.cells] !== n) bad('cell table does not match the star count');
  return { info: { ...info, cellDeg: g.cellDeg }, count: n, xyz, mag, id, cellStart, grid: g, fingerprint: fingerprintOf(bytes) };
}

/**
 * Indices of the stars within `radiusRad` of `centre` (unit vector), at most `limit` of them,
 * brightest first (ties: catalogue order).
 */
export function starsInCone(cat: Catalogue, centre: Vec3, radiusRad: number, limit = Infinity): number[] {
  const ra = Math.atan2(centre[1], centre[0]);
  const dec = Math.asin(Math.max(-1, Math.min(1, centre[2])));
  const cells = cellsInCone(cat.grid, ra < 0 ? ra + 2 * Math.PI : ra, dec, radiusRad);
  const cosR = Math.cos(radiusRad);
  const { rank, byRank } = brightnessRank(cat);
  let buf = new Int32Array(1024);
  let n = 0;
  const seen = new Set<number>();
  for (const c of cells) {
    if (seen.has(c)) continue;
    seen.add(c);
    for (let i = cat.cellStart[c]; i < cat.cellStart[c + 1]; i++) {
      const x = cat.xyz[3 * i], y = cat.xyz[3 * i + 1], z = cat.xyz[3 * i + 2];
      if (x * centre[0] + y * centre[1] + z * centre[2] >= cosR) {
        if (n === buf.length) { const b = new Int32Array(2 * n); b.set(buf); buf = b; }
        buf[n++] = rank[i];
      }
    }
  }
  const sorted = buf.subarray(0, n).sort();
  const m = Math.min(n, limit);
  const out = new Array<number>(m);
  for (let k = 0; k < m; k++) out[k] = byRank[sorted[k]];
  return out;
}

const rankCache = new WeakMap<Catalogue, { rank: Int32Array; byRank: Int32Array }>();

/** Each star's place in order of brightness (ties: catalogue order), and the inverse. */
export function brightnessRank(cat: Catalogue): { rank: Int32Array; byRank: Int32Array } {
  let r = rankCache.get(cat);
  if (!r) {
    // one numeric sort of keys magnitude (milli-mag, as stored) x 2^24 + index: exact in doubles
    const n = cat.count;
    const keys = new Float64Array(n);
    for (let i = 0; i < n; i++) keys[i] = (Math.round(cat.mag[i] * 1000) + 40000) * 16777216 + i;
    keys.sort();
    const byRank = new Int32Array(n);
    for (let k = 0; k < n; k++) byRank[k] = keys[k] % 16777216;
    const rank = new Int32Array(cat.count);
    for (let k = 0; k < cat.count; k++) rank[byRank[k]] = k;
    rankCache.set(cat, (r = { rank, byRank }));
  }
  return r;
}

/** "HIP 32349", or "#index" for a catalogue without numbers. */
export function catalogueId(cat: Catalogue, i: number): string {
  return cat.info.idPrefix && cat.id[i] ? `${cat.info.idPrefix} ${cat.id[i]}` : `${cat.info.name} #${i}`;
}

/** A label for a star: its proper name or designation when the catalogue has one. */
export function starName(cat: Catalogue, i: number): string | null {
  return cat.info.names?.[String(cat.id[i])] ?? null;
}

export function starRaDecDeg(cat: Catalogue, i: number): { raDeg: number; decDeg: number } {
  const x = cat.xyz[3 * i], y = cat.xyz[3 * i + 1], z = cat.xyz[3 * i + 2];
  let ra = Math.atan2(y, x) / DEG;
  if (ra < 0) ra += 360;
  return { raDeg: ra, decDeg: Math.asin(Math.max(-1, Math.min(1, z))) / DEG };
}

/** FNV-1a over the bytes, twice with different seeds (a cache key, not a security measure). */
export function fingerprintOf(bytes: Uint8Array): string {
  let h1 = 0x811c9dc5, h2 = 0x01000193 ^ bytes.length;
  for (let i = 0; i < bytes.length; i++) {
    h1 = Math.imul(h1 ^ bytes[i], 0x01000193) >>> 0;
    h2 = Math.imul(h2 ^ bytes[i], 0x5bd1e995) >>> 0;
  }
  return h1.toString(16).padStart(8, '0') + h2.toString(16).padStart(8, '0') + bytes.length.toString(16);
}
