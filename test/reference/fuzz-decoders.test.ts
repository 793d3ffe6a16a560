// Hostile input: every decoder (FITS, tile-compressed FITS, gzip, TIFF, PNG, JPEG, camera raw)
// gets ~2000 mutated and truncated files made from valid seeds (bit flips, boundary values written
// over header numbers and binary fields, truncation, chunk deletion and duplication). Each must
// either decode to a consistent Frame or give a SkyloupeError with one plain line naming the file:
// no other exception, no hang (a time bound per file), no runaway memory (peak RSS bound).
// Seeds for .fz come from fpack (Debian libcfitsio-bin); the test fails if it is missing.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { gzipSync } from 'node:zlib';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { SkyloupeError } from '../../core/errors.ts';
import { encodeFits } from '../../core/frame/fits-write.ts';
import { closeRawDecoder } from '../../core/frame/raw.ts';
import { decodeFrame } from '../../core/frame/read.ts';
import type { Frame } from '../../core/frame/types.ts';
import { makeDng } from '../helpers/dng.ts';
import { mulberry32, normal } from '../helpers/rng.ts';

/** Per-file bound: far above any honest decode of these small files (a few ms), below a hang. */
const MAX_MS_PER_FILE = 15_000;

type Seed = { kind: string; name: string; bytes: Uint8Array };
const seeds: Seed[] = [];
let dir = '';

function img(w: number, h: number, seed: number): Float64Array {
  const rnd = mulberry32(seed);
  const g = normal(rnd);
  const d = new Float64Array(w * h);
  for (let i = 0; i < d.length; i++) d[i] = 800 + 20 * g();
  for (let s = 0; s < 6; s++) {
    const cx = rnd() * w, cy = rnd() * h, a = 20000 * rnd();
    for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) d[y * w + x] += a * Math.exp(-((x - cx) ** 2 + (y - cy) ** 2) / 4);
  }
  return d;
}

beforeAll(async () => {
  const r = spawnSync('fpack', ['-V'], { encoding: 'utf8' });
  if (r.error) throw new Error('fpack is missing: apt-get install -y libcfitsio-bin (CI installs it)');
  dir = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-fuzz-'));
  const w = 48, h = 36;
  const d = img(w, h, 1);
  const cards = [{ key: 'FOCALLEN', value: 400 }, { key: 'XPIXSZ', value: 3.76 }, { key: 'BAYERPAT', value: 'RGGB' }];
  const f16 = encodeFits({ width: w, height: h, data: d, bitpix: 16, bzero: 32768, cards });
  const f32 = encodeFits({ width: w, height: h, data: d, bitpix: -32 });
  const f8 = encodeFits({ width: w, height: h, data: d.map((v) => Math.min(255, v / 100)), bitpix: 8 });
  seeds.push({ kind: 'fits', name: 'a.fits', bytes: f16 }, { kind: 'fits', name: 'b.fits', bytes: f32 }, { kind: 'fits', name: 'c.fits', bytes: f8 });
  writeFileSync(path.join(dir, 'i.fits'), f16);
  writeFileSync(path.join(dir, 'f.fits'), f32);
  for (const [src, flags, tag] of [
    ['i.fits', [], 'rice'], ['i.fits', ['-g'], 'gzip1'], ['i.fits', ['-g2', '-t', '16,12'], 'gzip2'],
    ['f.fits', ['-q', '4'], 'riceq'], ['f.fits', ['-t', '20,20', '-q0', '4'], 'riceq2d'],
  ] as [string, string[], string][]) {
    const out = path.join(dir, `${tag}.fz`);
    const p = spawnSync('fpack', [...flags, '-O', out, path.join(dir, src)], { encoding: 'utf8' });
    if (p.status !== 0) throw new Error(`fpack failed: ${p.stdout} ${p.stderr}`);
    seeds.push({ kind: 'fits-tiled', name: `${tag}.fz`, bytes: readFileSync(out) });
  }
  seeds.push({ kind: 'gzip', name: 'a.fits.gz', bytes: gzipSync(f16) });
  const u16 = Buffer.from(Uint16Array.from(d, (v) => Math.min(65535, v)).buffer);
  seeds.push({ kind: 'tiff', name: 'a.tif', bytes: await sharp(u16, { raw: { width: w, height: h, channels: 1 } }).toColourspace('grey16').tiff().toBuffer() });
  const rgb = Buffer.alloc(w * h * 3);
  for (let i = 0; i < w * h; i++) rgb.fill(Math.min(255, d[i] / 80), 3 * i, 3 * i + 3);
  seeds.push({ kind: 'png', name: 'a.png', bytes: await sharp(rgb, { raw: { width: w, height: h, channels: 3 } }).png().toBuffer() });
  seeds.push({ kind: 'jpeg', name: 'a.jpg', bytes: await sharp(rgb, { raw: { width: w, height: h, channels: 3 } }).jpeg({ quality: 90 }).toBuffer() });
  seeds.push({ kind: 'raw', name: 'a.dng', bytes: makeDng({ width: 64, height: 48, data: Uint16Array.from({ length: 64 * 48 }, (_, i) => 600 + (i * 37) % 4000), cfa: 'RGGB', black: 512, white: 16383, focalLengthMm: 50, fNumber: 2 }) });
}, 60_000);

afterAll(async () => {
  await closeRawDecoder();
  if (dir) rmSync(dir, { recursive: true, force: true });
});

const BOUNDARY = [0, 1, 0x7f, 0x80, 0xff];
const BIG = ['0', '-1', '1', '99999999', '2147483647', '-2147483648', '65536', '3', '999'];

/** One mutation of `b`, chosen and placed by `rnd`. */
function mutate(b: Uint8Array, rnd: () => number, headerText: boolean): Uint8Array {
  const pick = <T>(a: readonly T[]): T => a[Math.floor(rnd() * a.length)];
  const at = (n = b.length) => Math.floor(rnd() * n);
  const op = Math.floor(rnd() * 7);
  const out = Uint8Array.from(b);
  switch (op) {
    case 0: { const k = 1 + at(8); for (let i = 0; i < k; i++) out[at()] ^= 1 << at(8); return out; }
    case 1: { const k = 1 + at(4); for (let i = 0; i < k; i++) out[at()] = pick(BOUNDARY); return out; }
    case 2: return out.subarray(0, at());
    case 3: { // delete a chunk
      const s = at(), e = Math.min(b.length, s + 1 + at(4000));
      const r = new Uint8Array(b.length - (e - s)); r.set(b.subarray(0, s)); r.set(b.subarray(e), s); return r;
    }
    case 4: { // duplicate a chunk
      const s = at(), e = Math.min(b.length, s + 1 + at(3000));
      const r = new Uint8Array(b.length + (e - s)); r.set(b.subarray(0, e)); r.set(b.subarray(s), e); return r;
    }
    case 5: { // a 32-bit field overwritten with a boundary value (offsets, counts, sizes in binary formats)
      const p = at(Math.max(1, b.length - 4));
      const v = pick([0, 0xffffffff, 0x7fffffff, 0x80000000, 0x10000, 1]);
      new DataView(out.buffer).setUint32(p, v, rnd() < 0.5);
      return out;
    }
    default: { // a number in the ASCII header replaced (FITS keywords NAXISn, ZTILEn, PCOUNT, BITPIX, ...)
      if (!headerText) { out[at()] ^= 0xff; return out; }
      const limit = Math.min(b.length, 8640);
      const digits: number[] = [];
      for (let i = 0; i < limit; i++) if (b[i] >= 0x30 && b[i] <= 0x39 && (i % 80) >= 10 && (i % 80) < 30) digits.push(i);
      if (!digits.length) return out;
      const p = pick(digits);
      const card = p - (p % 80);
      const val = pick(BIG).padStart(20);
      for (let i = 0; i < 20; i++) out[card + 10 + i] = val.charCodeAt(i);
      return out;
    }
  }
}

function consistent(f: Frame): boolean {
  return Number.isInteger(f.width) && Number.isInteger(f.height) && f.width > 0 && f.height > 0 && f.data.length === f.width * f.height;
}

const PLAN: Record<string, number> = { fits: 1000, 'fits-tiled': 1600, gzip: 300, tiff: 500, png: 400, jpeg: 300, raw: 400 };

describe('fuzzed decoders', () => {
  it('mutated and truncated files: a Frame or one clear line, within the time bound', async () => {
    const rnd = mulberry32(20261201);
    const stats: Record<string, { ok: number; refused: number; maxMs: number }> = {};
    const failures: string[] = [];
    let total = 0;
    const msgs = new Map<string, number>();
    for (const [kind, count] of Object.entries(PLAN)) {
      const ks = seeds.filter((s) => s.kind === kind);
      expect(ks.length, `seeds for ${kind}`).toBeGreaterThan(0);
      const st = (stats[kind] = { ok: 0, refused: 0, maxMs: 0 });
      for (let i = 0; i < count; i++) {
        const seed = ks[i % ks.length];
        let bytes = mutate(seed.bytes, rnd, kind === 'fits' || kind === 'fits-tiled');
        if (rnd() < 0.3) bytes = mutate(bytes, rnd, kind === 'fits' || kind === 'fits-tiled');
        if (kind === 'gzip' && rnd() < 0.5) bytes = gzipSync(mutate(seeds[0].bytes, rnd, true)); // valid gzip, hostile FITS inside
        const t0 = performance.now();
        try {
          const f = await decodeFrame(bytes, seed.name);
          if (!consistent(f)) failures.push(`${kind}#${i}: inconsistent frame ${f.width}x${f.height}/${f.data.length}`);
          st.ok++;
        } catch (e) {
          if (!(e instanceof SkyloupeError)) failures.push(`${kind}#${i}: ${e instanceof Error ? `${e.name}: ${e.message}` : String(e)}`.slice(0, 300));
          else if (!e.message.startsWith(`${seed.name}: `) || e.message.includes('\n') || e.message.length > 400) failures.push(`${kind}#${i}: unclear message: ${e.message.slice(0, 300)}`);
          else { st.refused++; msgs.set(e.message.replace(/\d+/g, 'N'), (msgs.get(e.message.replace(/\d+/g, 'N')) ?? 0) + 1); }
        }
        const ms = performance.now() - t0;
        st.maxMs = Math.max(st.maxMs, ms);
        if (ms > MAX_MS_PER_FILE) failures.push(`${kind}#${i}: took ${ms.toFixed(0)} ms`);
        total++;
      }
    }
    if (process.env.FUZZ_MESSAGES) console.log([...msgs].sort((a, b) => b[1] - a[1]).map(([m, n]) => `${n} ${m}`).join('\n'));
    const peakMb = process.resourceUsage().maxRSS / 1024;
    console.log(`fuzz: ${total} files; ${Object.entries(stats).map(([k, s]) => `${k} ${s.ok} ok/${s.refused} refused, max ${s.maxMs.toFixed(0)} ms`).join('; ')}; peak RSS ${peakMb.toFixed(0)} MB`);
    expect(failures.slice(0, 10)).toEqual([]);
    expect(total).toBeGreaterThanOrEqual(4000);
    // Memory bound: these files are tiny; 2 GB would mean an allocation driven by a hostile size field.
    expect(peakMb).toBeLessThan(2048);
  }, 180_000);

  it('huge sizes claimed by small files are refused before any large allocation', async () => {
    /** Replaces the value of one header card (fixed format, bytes 11-30) in a copy. */
    const setCard = (b: Uint8Array, key: string, value: number): Uint8Array => {
      const out = Uint8Array.from(b);
      for (let p = 0; p + 80 <= Math.min(out.length, 28800); p += 80) {
        if (String.fromCharCode(...out.subarray(p, p + 8)).trimEnd() === key && out[p + 8] === 0x3d) {
          const v = String(value).padStart(20);
          for (let i = 0; i < 20; i++) out[p + 10 + i] = v.charCodeAt(i);
          return out;
        }
      }
      throw new Error(`no card ${key}`);
    };
    const rice = seeds.find((s) => s.name === 'rice.fz')!.bytes;
    const gz = seeds.find((s) => s.name === 'gzip1.fz')!.bytes;
    const plain = seeds.find((s) => s.name === 'a.fits')!.bytes;
    // 36 table rows; ZTILE2 = ceil(16384 / 36) keeps the tile count consistent, so only the data can tell.
    const claims: [string, Uint8Array][] = [
      ['rice.fz', setCard(setCard(setCard(setCard(rice, 'ZNAXIS1', 16384), 'ZNAXIS2', 16384), 'ZTILE2', 456), 'ZTILE1', 16384)],
      ['gzip1.fz', setCard(setCard(setCard(setCard(gz, 'ZNAXIS1', 16384), 'ZNAXIS2', 16384), 'ZTILE2', 456), 'ZTILE1', 16384)],
      ['a.fits', setCard(setCard(plain, 'NAXIS1', 16384), 'NAXIS2', 16384)],
      ['a.fits', setCard(setCard(plain, 'NAXIS1', 100000), 'NAXIS2', 100000)],
    ];
    for (const [name, bytes] of claims) {
      const before = process.memoryUsage().arrayBuffers;
      const err = await decodeFrame(bytes, name).catch((e: unknown) => e);
      expect(err).toBeInstanceOf(SkyloupeError);
      expect((err as Error).message).toMatch(/truncated|too large/);
      // 16384^2 float32 would be 1 GiB; nothing near that may have been allocated.
      expect(process.memoryUsage().arrayBuffers - before).toBeLessThan(64 * 2 ** 20);
    }
  });
});

