/**
 * A cache of built asterism bands on disk, so a process does not spend a second rebuilding the
 * small-asterism bands another process already built. Keyed by the catalogue's fingerprint, the
 * band and the index settings; written atomically (temporary file, then rename); any failure
 * (read-only disk, a damaged or foreign file) falls back to building. SKYLOUPE_SKY_CACHE=0 turns
 * it off; SKYLOUPE_SKY_CACHE=DIR puts it in DIR (default: the system's temporary folder).
 *
 * A file holds what cannot be recomputed quickly: the index stars, the asterisms and their codes;
 * the cell lists and code bins are rebuilt on load (asterism.ts bandFromStored, a few ms).
 *
 * Versions: the files of one format, catalogue and index settings (about 26 MB for all bands of
 * the bundled catalogue). Once per process, on its first use of the cache, the versions other than
 * the one in use are deleted when unused for UNUSED_DAYS days (OLD_FORMAT_UNUSED_DAYS for older
 * formats) or when KEEP_VERSIONS - 1 other versions were used more recently, and so are temporary
 * files left by writers that died. Loading a file marks its version used (its time stamp), so a
 * version another process still uses (an older skyloupe, a user's deeper catalogue) stays. A
 * process reading a file that is deleted under it either has it open already (the data stay
 * readable) or finds it gone and builds the band: deleting is always safe.
 */
import { mkdirSync, readdirSync, readFileSync, renameSync, rmSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { bandFromStored, type BandIndex } from './asterism.ts';
import type { Catalogue } from './catalogue.ts';

/** Bump when the index construction or the file layout changes (older formats are pruned once unused for a day). */
export const BAND_FORMAT = 4;
const MAGIC = 0x534c4249; // 'SLBI'
/** Versions kept: the one in use and the most recently used others (a deeper catalogue of the user's, say). */
export const KEEP_VERSIONS = 3;
/** A version unused this long is deleted; one of an older format sooner (only an older skyloupe still reads it). */
export const UNUSED_DAYS = 7;
export const OLD_FORMAT_UNUSED_DAYS = 1;
/** A temporary file older than this belongs to a writer that died. */
const TMP_STALE_MS = 3600_000;
const HEAD = 9;

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

/** band-FORMAT-KEY.bin, KEY = fingerprint-band-settings (bands.ts). */
function fileFor(key: string): string | null {
  const dir = cacheDir();
  return dir ? path.join(dir, `band-${BAND_FORMAT}-${key}.bin`) : null;
}

const FILE_RE = /^band-(\d+)-([0-9a-z]+)-(\d+)-([0-9-]+)\.bin$/;
const TMP_RE = /^band-\d+-.*\.bin\.\d+\.[0-9a-z]+\.tmp$/;

/** The version a cache file belongs to ("format-fingerprint-settings"), its format; null for other files. */
export function versionOf(name: string): { version: string; format: number } | null {
  const m = FILE_RE.exec(name);
  return m ? { version: `${m[1]}-${m[2]}-${m[4]}`, format: Number(m[1]) } : null;
}

/**
 * Deletes what the rules in the header say is stale; `current` is the version in use. Returns the
 * names deleted. Every step tolerates files vanishing under it (another process pruning too).
 */
export function pruneCache(dir: string, current: string, now = Date.now()): string[] {
  let names: string[];
  try {
    names = readdirSync(dir);
  } catch {
    return [];
  }
  const mtime = (name: string): number | null => {
    try {
      return statSync(path.join(dir, name)).mtimeMs;
    } catch {
      return null;
    }
  };
  const doomed: string[] = [];
  const versions = new Map<string, { names: string[]; used: number; format: number }>();
  for (const name of names) {
    if (TMP_RE.test(name)) {
      const t = mtime(name);
      if (t !== null && now - t > TMP_STALE_MS) doomed.push(name);
      continue;
    }
    const v = versionOf(name);
    if (!v) continue;
    const t = mtime(name);
    if (t === null) continue;
    const e = versions.get(v.version) ?? { names: [], used: 0, format: v.format };
    e.names.push(name);
    e.used = Math.max(e.used, t);
    versions.set(v.version, e);
  }
  const others = [...versions.entries()].filter(([v]) => v !== current).sort((a, b) => b[1].used - a[1].used);
  for (const [k, [, e]] of others.entries()) {
    const maxAge = (e.format < BAND_FORMAT ? OLD_FORMAT_UNUSED_DAYS : UNUSED_DAYS) * 86400_000;
    if (k >= KEEP_VERSIONS - 1 || now - e.used > maxAge) doomed.push(...e.names);
  }
  for (const name of doomed) rmSync(path.join(dir, name), { force: true });
  return doomed;
}

let pruned = false;

/** Once per process: prune the cache around the version of `key`. */
function pruneOnce(key: string): void {
  if (pruned) return;
  pruned = true;
  const file = fileFor(key);
  const v = file ? versionOf(path.basename(file)) : null;
  if (!file || !v) return;
  try {
    pruneCache(path.dirname(file), v.version);
  } catch {
    // the cache is optional
  }
}

export function saveBand(key: string, b: BandIndex): void {
  const file = fileFor(key);
  if (!file) return;
  try {
    mkdirSync(path.dirname(file), { recursive: true });
    pruneOnce(key);
    const ps: ArrayBufferView[] = [b.stars, b.quads, b.codes];
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

export function loadBand(key: string, cat: Catalogue, dLo: number, dHi: number): BandIndex | null {
  const file = fileFor(key);
  if (!file) return null;
  pruneOnce(key);
  try {
    const buf = readFileSync(file);
    const bytes = new Uint8Array(buf.buffer, buf.byteOffset, buf.byteLength);
    if (bytes.byteLength < HEAD * 8) return null;
    const head = new Float64Array(bytes.slice(0, HEAD * 8).buffer);
    if (head[0] !== MAGIC || head[1] !== BAND_FORMAT || head[2] !== dLo || head[3] !== dHi) return null;
    const sizes = Array.from(head.subarray(6, HEAD));
    if (HEAD * 8 + sizes.reduce((s, v) => s + v, 0) !== bytes.byteLength || sizes.some((n) => n % 4 !== 0)) return null;
    let o = HEAD * 8;
    const take = (n: number): ArrayBuffer => {
      const b = bytes.slice(o, o + n).buffer;
      o += n;
      return b;
    };
    const stars = new Int32Array(take(sizes[0]));
    const quads = new Int32Array(take(sizes[1]));
    const codes = new Float32Array(take(sizes[2]));
    if (quads.length !== 4 * head[5]) return null;
    const band = bandFromStored(cat, { dLo, dHi, cellDeg: head[4], stars, quads, codes });
    if (band) {
      try {
        const now = new Date();
        utimesSync(file, now, now); // this version is in use
      } catch {
        // a read-only cache still serves
      }
    }
    return band;
  } catch {
    return null;
  }
}
