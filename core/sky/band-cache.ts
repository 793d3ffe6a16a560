/**
 * A cache of built asterism bands on disk, so a process does not spend a second rebuilding the
 * small-asterism bands another process already built. Keyed by the catalogue's fingerprint, the
 * band and the index settings; written atomically (temporary file, then rename); any failure
 * (read-only disk, a damaged or foreign file) falls back to building. SKYLOUPE_SKY_CACHE=0 turns
 * it off; SKYLOUPE_SKY_CACHE=DIR puts it in DIR (default: the system's temporary folder).
 */
import { mkdirSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import type { BandIndex } from './asterism.ts';
import { cellGrid } from './catalogue.ts';

/** Bump when the index construction changes (old files are then ignored). */
export const BAND_FORMAT = 3;
const MAGIC = 0x534c4249; // 'SLBI'

function cacheDir(): string | null {
  const env = typeof process !== 'undefined' ? process.env?.SKYLOUPE_SKY_CACHE : undefined;
  if (env === '0') return null;
  if (env) return env;
  try {
    return path.join(tmpdir(), `skyloupe-sky-cache-${typeof process.getuid === 'function' ? process.getuid() : 'user'}`);
  } catch {
    return null;
  }
}

function fileFor(key: string): string | null {
  const dir = cacheDir();
  return dir ? path.join(dir, `band-${BAND_FORMAT}-${key}.bin`) : null;
}

/** Arrays of a band in file order. */
function parts(b: BandIndex): ArrayBufferView[] {
  return [b.stars, b.starCellStart, b.starOrder, b.quads, b.codes, b.binStart];
}

export function saveBand(key: string, b: BandIndex): void {
  const file = fileFor(key);
  if (!file) return;
  try {
    mkdirSync(path.dirname(file), { recursive: true });
    const ps = parts(b);
    const head = new Float64Array([MAGIC, BAND_FORMAT, b.dLo, b.dHi, b.starGrid.cellDeg, b.count, ...ps.map((p) => p.byteLength)]);
    const total = head.byteLength + ps.reduce((s, p) => s + p.byteLength, 0);
    const out = new Uint8Array(total);
    let o = 0;
    out.set(new Uint8Array(head.buffer), o); o += head.byteLength;
    for (const p of ps) { out.set(new Uint8Array(p.buffer, p.byteOffset, p.byteLength), o); o += p.byteLength; }
    const tmp = `${file}.${process.pid}.${Math.random().toString(36).slice(2)}.tmp`;
    try {
      writeFileSync(tmp, out);
      renameSync(tmp, file);
    } catch {
      rmSync(tmp, { force: true });
    }
  } catch {
    // the cache is optional
  }
}

export function loadBand(key: string, dLo: number, dHi: number): BandIndex | null {
  const file = fileFor(key);
  if (!file) return null;
  try {
    const buf = readFileSync(file);
    const bytes = new Uint8Array(buf.buffer, buf.byteOffset, buf.byteLength);
    const headLen = 6 + 6;
    if (bytes.byteLength < headLen * 8) return null;
    const head = new Float64Array(bytes.slice(0, headLen * 8).buffer);
    if (head[0] !== MAGIC || head[1] !== BAND_FORMAT || head[2] !== dLo || head[3] !== dHi) return null;
    const sizes = Array.from(head.subarray(6, 12));
    if (headLen * 8 + sizes.reduce((s, v) => s + v, 0) !== bytes.byteLength) return null;
    let o = headLen * 8;
    const take = <T>(n: number, make: (b: ArrayBuffer) => T): T => {
      const t = make(bytes.slice(o, o + n).buffer);
      o += n;
      return t;
    };
    const stars = take(sizes[0], (b) => new Int32Array(b));
    const starCellStart = take(sizes[1], (b) => new Int32Array(b));
    const starOrder = take(sizes[2], (b) => new Int32Array(b));
    const quads = take(sizes[3], (b) => new Int32Array(b));
    const codes = take(sizes[4], (b) => new Float32Array(b));
    const binStart = take(sizes[5], (b) => new Int32Array(b));
    const grid = cellGrid(head[4]);
    if (grid.cellDeg !== head[4] || starCellStart.length !== grid.cells + 1 || quads.length !== 4 * head[5] || codes.length !== 4 * head[5]) return null;
    return { dLo, dHi, stars, starGrid: grid, starCellStart, starOrder, quads, codes, binStart, count: head[5] };
  } catch {
    return null;
  }
}
