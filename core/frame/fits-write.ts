/**
 * Minimal FITS writer (one primary HDU, 2-D image), FITS Standard 4.0: fixed-format cards
 * (§4.2: logicals and numbers right-justified to byte 30, strings from byte 11 with the
 * closing quote at byte 20 or later), header padded with blanks and data with zeros to
 * 2880-byte blocks (§3.3), big-endian data, stored = (physical - BZERO) / BSCALE (§4.4.2.5).
 */
import type { FitsCard } from './fits-card.ts';

const BLOCK = 2880;
const RESERVED = new Set(['SIMPLE', 'BITPIX', 'NAXIS', 'NAXIS1', 'NAXIS2', 'EXTEND', 'BZERO', 'BSCALE', 'END']);
const KEY_RE = /^[A-Z0-9_-]{0,8}$/;
const RANGE: Record<number, [number, number]> = { 8: [0, 255], 16: [-32768, 32767], 32: [-2147483648, 2147483647] };

function formatValue(v: string | number | boolean, key: string): string {
  if (typeof v === 'boolean') return (v ? 'T' : 'F').padStart(20);
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) throw new Error(`FITS card ${key}: value ${v} cannot be written`);
    const s = Number.isInteger(v) && Math.abs(v) < 1e21 ? String(v) : String(v).toUpperCase();
    return s.padStart(20);
  }
  const inner = v.replace(/'/g, "''");
  if (inner.length > 68) throw new Error(`FITS card ${key}: string longer than 68 characters`);
  return `'${inner.padEnd(8)}'`;
}

/** One 80-character card. */
export function formatCard(card: FitsCard): string {
  const { key, value, comment } = card;
  if (!KEY_RE.test(key)) throw new Error(`FITS keyword "${key}" is not 1-8 of A-Z 0-9 _ -`);
  if (key === 'COMMENT' || key === 'HISTORY' || key === '') {
    return (key.padEnd(8) + (comment ?? (value === null ? '' : String(value)))).slice(0, 80).padEnd(80);
  }
  let s = key.padEnd(8) + '= ' + (value === null ? ''.padEnd(20) : formatValue(value, key));
  if (s.length > 80) throw new Error(`FITS card ${key}: value does not fit in one card`);
  if (comment) s += ' / ' + comment;
  return s.slice(0, 80).padEnd(80);
}

/**
 * Writes a primary HDU holding one 2-D image. `data` are physical values; integer BITPIX stores
 * round((v - BZERO) / BSCALE) clamped to the type's range (NaN -> BLANK, which must then be given
 * in `cards`). Row 0 of `data` is the first row stored.
 */
export function encodeFits(img: {
  width: number; height: number; data: ArrayLike<number>;
  bitpix: 8 | 16 | 32 | -32 | -64; bzero?: number; bscale?: number; cards?: FitsCard[];
}): Uint8Array {
  const { width, height, data, bitpix } = img;
  const n = width * height;
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1) throw new Error('encodeFits: width and height must be positive integers');
  if (data.length !== n) throw new Error(`encodeFits: data has ${data.length} values, expected ${n}`);
  const bzero = img.bzero ?? 0;
  const bscale = img.bscale ?? 1;
  if (!Number.isFinite(bzero) || !Number.isFinite(bscale) || bscale === 0) throw new Error('encodeFits: invalid BZERO/BSCALE');

  const cards: FitsCard[] = [
    { key: 'SIMPLE', value: true, comment: 'conforms to the FITS standard' },
    { key: 'BITPIX', value: bitpix },
    { key: 'NAXIS', value: 2 },
    { key: 'NAXIS1', value: width },
    { key: 'NAXIS2', value: height },
  ];
  if (img.bzero !== undefined) cards.push({ key: 'BZERO', value: bzero });
  if (img.bscale !== undefined) cards.push({ key: 'BSCALE', value: bscale });
  let blank: number | null = null;
  for (const c of img.cards ?? []) {
    if (RESERVED.has(c.key)) throw new Error(`encodeFits: keyword ${c.key} is written by encodeFits itself`);
    if (c.key === 'BLANK' && typeof c.value === 'number') blank = c.value;
    cards.push(c);
  }
  const header = cards.map(formatCard).join('') + 'END'.padEnd(80);
  const headerBytes = Math.ceil(header.length / BLOCK) * BLOCK;
  const bytesPer = Math.abs(bitpix) / 8;
  const dataBytes = n * bytesPer;
  const out = new Uint8Array(headerBytes + Math.ceil(dataBytes / BLOCK) * BLOCK);
  out.fill(0x20, 0, headerBytes);
  for (let i = 0; i < header.length; i++) out[i] = header.charCodeAt(i);

  const dv = new DataView(out.buffer, headerBytes, dataBytes);
  if (bitpix < 0) {
    for (let i = 0; i < n; i++) {
      const v = (data[i] - bzero) / bscale;
      if (bitpix === -32) dv.setFloat32(4 * i, v, false);
      else dv.setFloat64(8 * i, v, false);
    }
    return out;
  }
  const [lo, hi] = RANGE[bitpix];
  for (let i = 0; i < n; i++) {
    const v = data[i];
    let s: number;
    if (Number.isNaN(v)) {
      if (blank === null) throw new Error('encodeFits: NaN pixel with integer BITPIX needs a BLANK card');
      s = blank;
    } else {
      s = Math.min(hi, Math.max(lo, Math.round((v - bzero) / bscale)));
    }
    if (bitpix === 8) dv.setUint8(i, s);
    else if (bitpix === 16) dv.setInt16(2 * i, s, false);
    else dv.setInt32(4 * i, s, false);
  }
  return out;
}
