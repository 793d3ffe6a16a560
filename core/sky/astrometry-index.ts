/**
 * Stars from astrometry.net index files (the FITS files Debian ships in astrometry-data-tycho2-*,
 * BSD-2: Tycho-2 stars, uniformly thinned), for a deeper catalogue in skyloupe's own format. An
 * index file keeps its stars as a k-d tree: the table `kdtree_data_stars` holds each star's unit
 * vector as three unsigned integers in the file's byte order (the ENDIAN card of the primary
 * header), `kdtree_range_stars` the conversion (lower bounds, upper bounds, then the scale:
 * value = lower + integer / scale), and a tag-along table the magnitudes (a standard FITS binary
 * table, big-endian). Only these tables are read; the asterisms in the file are not used.
 */
import { SkyloupeError } from '../errors.ts';
import type { CatalogueStar } from './catalogue.ts';
import { DEG } from './sphere.ts';

interface Hdu {
  cards: Map<string, string | number>;
  dataStart: number;
  dataBytes: number;
}

function bad(file: string, what: string): never {
  throw new SkyloupeError('unreadable', `${file}: ${what}`);
}

function parseValue(raw: string): string | number {
  const v = raw.split('/')[0].trim();
  if (v.startsWith("'")) {
    const end = raw.indexOf("'", raw.indexOf("'") + 1);
    return raw.slice(raw.indexOf("'") + 1, end).trim();
  }
  const n = Number(v);
  return Number.isFinite(n) && v !== '' ? n : v;
}

/** The header-data units of a FITS file (headers parsed, data located). */
function hdus(bytes: Uint8Array, file: string): Hdu[] {
  const out: Hdu[] = [];
  let o = 0;
  const dec = new TextDecoder('latin1');
  while (o + 2880 <= bytes.length) {
    const cards = new Map<string, string | number>();
    let end = false;
    let p = o;
    while (!end) {
      if (p + 2880 > bytes.length) bad(file, 'truncated FITS header');
      const block = dec.decode(bytes.subarray(p, p + 2880));
      p += 2880;
      for (let i = 0; i < 36; i++) {
        const card = block.slice(80 * i, 80 * i + 80);
        const key = card.slice(0, 8).trim();
        if (key === 'END') { end = true; break; }
        if (card[8] === '=' && key) cards.set(key, parseValue(card.slice(10)));
      }
    }
    if (out.length === 0 && cards.get('SIMPLE') !== 'T' && cards.get('SIMPLE') !== undefined && String(cards.get('SIMPLE')) !== 'T') bad(file, 'not a FITS file');
    const bitpix = Math.abs(Number(cards.get('BITPIX') ?? 8));
    const naxis = Number(cards.get('NAXIS') ?? 0);
    let n = naxis > 0 ? 1 : 0;
    for (let k = 1; k <= naxis; k++) n *= Number(cards.get(`NAXIS${k}`) ?? 0);
    const dataBytes = (bitpix / 8) * n + Number(cards.get('PCOUNT') ?? 0);
    if (!Number.isFinite(dataBytes) || dataBytes < 0) bad(file, 'a header with impossible sizes');
    out.push({ cards, dataStart: p, dataBytes });
    o = p + Math.ceil(dataBytes / 2880) * 2880;
  }
  if (!out.length) bad(file, 'not a FITS file (too short)');
  return out;
}

export interface IndexStars {
  stars: CatalogueStar[];
  band: string;
}

/** Stars (RA, Dec, magnitude) of one astrometry.net index file. */
export function readAstrometryIndex(bytes: Uint8Array, file: string): IndexStars {
  if (bytes.length < 2880 || new TextDecoder('latin1').decode(bytes.subarray(0, 6)) !== 'SIMPLE') bad(file, 'not a FITS file');
  const list = hdus(bytes, file);
  const endian = String(list[0].cards.get('ENDIAN') ?? '');
  const little = endian === '04:03:02:01' ? true : endian === '01:02:03:04' ? false : null;
  if (little === null) bad(file, 'no ENDIAN card: not an astrometry.net index file');
  const byName = (name: string) => list.find((h) => String(h.cards.get('TTYPE1') ?? '').toLowerCase() === name.toLowerCase());
  const data = byName('kdtree_data_stars');
  const range = byName('kdtree_range_stars');
  if (!data || !range) bad(file, 'no star tree (kdtree_data_stars): not an astrometry.net index file');
  const n = Number(data.cards.get('NAXIS2'));
  const rowBytes = Number(data.cards.get('NAXIS1'));
  if (rowBytes !== 12 && rowBytes !== 24) bad(file, `star tree rows of ${rowBytes} bytes (expected 3 x u32 or 3 x double)`);
  if (data.dataStart + n * rowBytes > bytes.length || range.dataStart + 56 > bytes.length) bad(file, 'truncated star tree');
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const lo = [0, 1, 2].map((k) => dv.getFloat64(range.dataStart + 8 * k, little));
  const scale = dv.getFloat64(range.dataStart + 48, little);
  if (!(scale > 0)) bad(file, 'star tree without a valid scale');
  // magnitudes: the tag-along table (a FITS binary table with a MAG column, big-endian)
  const tag = list.find((h) => String(h.cards.get('AN_FILE') ?? '').trim() === 'TAGALONG' && Number(h.cards.get('NAXIS2')) === n);
  let magCol: { off: number; type: string; rowBytes: number; start: number } | null = null;
  let band = 'unknown';
  if (tag) {
    const nf = Number(tag.cards.get('TFIELDS') ?? 0);
    let off = 0;
    for (let k = 1; k <= nf; k++) {
      const name = String(tag.cards.get(`TTYPE${k}`) ?? '');
      const form = String(tag.cards.get(`TFORM${k}`) ?? '');
      const m = /^(\d*)([A-Z])/.exec(form);
      const count = m && m[1] ? Number(m[1]) : 1;
      const type = m ? m[2] : '';
      const size = { E: 4, D: 8, J: 4, K: 8, I: 2, B: 1, A: 1, L: 1 }[type] ?? 0;
      if (!magCol && /^MAG/i.test(name) && (type === 'E' || type === 'D')) {
        magCol = { off, type, rowBytes: Number(tag.cards.get('NAXIS1')), start: tag.dataStart };
        band = name.replace(/^MAG_?/i, '') || 'unknown';
      }
      off += size * count;
    }
  }
  const stars: CatalogueStar[] = new Array(n);
  for (let i = 0; i < n; i++) {
    const v = [0, 0, 0];
    for (let k = 0; k < 3; k++) {
      v[k] = rowBytes === 12
        ? lo[k] + dv.getUint32(data.dataStart + 12 * i + 4 * k, little) / scale
        : dv.getFloat64(data.dataStart + 24 * i + 8 * k, little);
    }
    const norm = Math.hypot(v[0], v[1], v[2]);
    let ra = Math.atan2(v[1], v[0]) / DEG;
    if (ra < 0) ra += 360;
    const dec = Math.asin(Math.max(-1, Math.min(1, v[2] / norm))) / DEG;
    let mag = NaN;
    if (magCol) {
      const p = magCol.start + magCol.rowBytes * i + magCol.off;
      mag = magCol.type === 'E' ? dv.getFloat32(p, false) : dv.getFloat64(p, false);
    }
    stars[i] = { raDeg: ra, decDeg: dec, mag, id: 0 };
  }
  return { stars, band };
}

/** Merge star lists, dropping stars within `radiusArcsec` of one already kept (the brighter wins). */
export function mergeStars(lists: CatalogueStar[][], radiusArcsec = 1): CatalogueStar[] {
  const all = lists.flat().filter((s) => Number.isFinite(s.raDeg) && Number.isFinite(s.decDeg));
  all.sort((a, b) => (Number.isFinite(a.mag) ? a.mag : 99) - (Number.isFinite(b.mag) ? b.mag : 99));
  const cell = radiusArcsec / 3600;
  const seen = new Map<string, CatalogueStar[]>();
  const out: CatalogueStar[] = [];
  const cosR = Math.cos(radiusArcsec / 3600 * DEG);
  const vec = (s: CatalogueStar) => { const c = Math.cos(s.decDeg * DEG); return [c * Math.cos(s.raDeg * DEG), c * Math.sin(s.raDeg * DEG), Math.sin(s.decDeg * DEG)]; };
  for (const s of all) {
    const gy = Math.floor(s.decDeg / cell);
    const w = cell / Math.max(1e-6, Math.cos(s.decDeg * DEG));
    const gx = Math.floor(s.raDeg / w);
    const v = vec(s);
    let dup = false;
    for (let a = gy - 1; a <= gy + 1 && !dup; a++) {
      for (let b = gx - 1; b <= gx + 1 && !dup; b++) {
        for (const t of seen.get(`${a}:${b}`) ?? []) {
          const u = vec(t);
          if (u[0] * v[0] + u[1] * v[1] + u[2] * v[2] >= cosR) { dup = true; break; }
        }
      }
    }
    if (dup) continue;
    const k = `${gy}:${gx}`;
    const l = seen.get(k);
    if (l) l.push(s); else seen.set(k, [s]);
    out.push(s);
  }
  return out;
}
