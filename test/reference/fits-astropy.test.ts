// FITS reader and writer against an independent implementation: astropy (Debian python3-astropy,
// /usr/bin/python3). The generator script writes files with astropy and the expected physical
// values computed with numpy; our files are read back by astropy and verified to the standard.
// Without astropy this test fails (it must not pass silently): apt-get install -y python3-astropy python3-numpy
import { spawnSync } from 'node:child_process';
import { mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { SkyloupeError } from '../../core/errors.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { encodeFits } from '../../core/frame/fits-write.ts';
import { readFrame } from '../../core/frame/read.ts';
import type { FitsCard } from '../../core/frame/fits-card.ts';

const root = fileURLToPath(new URL('../../', import.meta.url));
const script = fileURLToPath(new URL('./fits-astropy-gen.py', import.meta.url));
const outDir = path.join(root, 'test-output', `fits-astropy-${process.pid}`);

function findPython(): string {
  // Debian's python first: a pyenv python on PATH usually lacks astropy.
  for (const py of ['/usr/bin/python3', 'python3']) {
    const r = spawnSync(py, ['-c', 'import astropy, numpy'], { encoding: 'utf8' });
    if (r.status === 0) return py;
  }
  throw new Error('python3 with astropy not found: install the Debian packages python3-astropy and python3-numpy (apt-get install -y python3-astropy python3-numpy)');
}

function run(py: string, args: string[]): string {
  const r = spawnSync(py, [script, ...args], { encoding: 'utf8', timeout: 60_000 });
  if (r.status !== 0) throw new Error(`astropy script failed (${r.status}): ${r.stderr || r.error}`);
  return r.stdout;
}

function f64(file: string): Float64Array {
  const b = readFileSync(file);
  return new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.length));
}

/** Count of pixels where ours differs from float32(expected); NaN must match NaN. */
function mismatches(got: Float32Array, want: Float64Array): number {
  let bad = 0;
  for (let i = 0; i < want.length; i++) {
    const w = want[i];
    if (Number.isNaN(w) ? !Number.isNaN(got[i]) : got[i] !== Math.fround(w)) bad++;
  }
  return bad + Math.abs(got.length - want.length);
}

interface Case {
  name: string; file: string; expected?: string; width?: number; height?: number; error?: string;
  saturation?: number | null; displayTopRow?: 'first' | 'last'; cfa?: string;
  focalLengthMm?: number; apertureMm?: number; pixelSizeUm?: number; instrume?: string; object?: string; exptime?: number; hdu?: number;
}

let py = '';
let cases: Case[] = [];

beforeAll(() => {
  py = findPython();
  rmSync(outDir, { recursive: true, force: true });
  mkdirSync(outDir, { recursive: true });
  run(py, ['gen', outDir]);
  cases = JSON.parse(readFileSync(path.join(outDir, 'manifest.json'), 'utf8')).cases;
});

afterAll(() => rmSync(outDir, { recursive: true, force: true }));

const NAMES = ['u16', 'i16', 'u8', 'i32', 'i64', 'f32', 'f64', 'scaled16', 'cube', 'ext', 'big'];

describe('decodeFits reads files written by astropy', () => {
  for (const name of NAMES) {
    it(name, () => {
      const c = cases.find((k) => k.name === name);
      expect(c, `case ${name} in manifest`).toBeDefined();
      const f = decodeFits(readFileSync(c!.file));
      expect([f.width, f.height]).toEqual([c!.width, c!.height]);
      expect(mismatches(f.data, f64(c!.expected!))).toBe(0);
      // saturation = BZERO + BSCALE * highest stored code (FITS 4.0 §4.4.2.5); null for float data
      if (c!.saturation !== undefined) expect(f.saturationLevel).toBe(c!.saturation === null ? null : Math.fround(c!.saturation));
      expect(f.displayTopRow).toBe(c!.displayTopRow ?? 'last');
      expect(f.format).toBe('fits');
    });
  }

  it('extension image: ROWORDER, BAYERPAT, optics keywords, strings with quotes and slashes', () => {
    const c = cases.find((k) => k.name === 'ext')!;
    const f = decodeFits(readFileSync(c.file));
    expect(f.cfa).toBe(c.cfa);
    expect(f.hints).toMatchObject({ from: 'header', focalLengthMm: c.focalLengthMm, apertureMm: c.apertureMm, pixelSizeUm: c.pixelSizeUm });
    expect(f.meta.INSTRUME).toBe(c.instrume);
    expect(f.meta.OBJECT).toBe(c.object);
    expect(f.meta.EXPTIME).toBe(c.exptime);
    expect(f.meta.HDU).toBe(c.hdu);
  });

  // Tile-compressed images written by astropy (CompImageHDU), read back by astropy for the expected values.
  for (const name of ['compressed', 'comp_u16_RICE_1', 'comp_u16_GZIP_1', 'comp_u16_GZIP_2', 'comp_f32q']) {
    it(`tile-compressed: ${name}`, () => {
      const c = cases.find((k) => k.name === name)!;
      expect(c, `case ${name} in manifest`).toBeDefined();
      const f = decodeFits(readFileSync(c.file));
      expect(f.format).toBe('fits-tiled');
      expect([f.width, f.height]).toEqual([c.width, c.height]);
      expect(mismatches(f.data, f64(c.expected!))).toBe(0);
      if (c.saturation !== undefined) expect(f.saturationLevel).toBe(c.saturation === null ? null : Math.fround(c.saturation));
    });
  }

  it('readFrame dispatches a FITS file by its magic bytes', async () => {
    const c = cases.find((k) => k.name === 'u16')!;
    const f = await readFrame(c.file);
    expect(mismatches(f.data, f64(c.expected!))).toBe(0);
  });
});

describe('encodeFits output read by astropy (verify("exception") on every card)', () => {
  const w = 7;
  const h = 3;
  const ramp = (k: number): number[] => Array.from({ length: w * h }, (_, i) => i * k);
  const cards: FitsCard[] = [
    { key: 'OBSERVER', value: "O'Hara's / team", comment: 'quote and slash' },
    { key: 'FLAG', value: false },
    { key: 'EXPTIME', value: 12.5, comment: '[s]' },
    { key: 'TINY', value: 1.25e-12 },
    { key: 'COUNT', value: -17 },
    { key: 'ROWORDER', value: 'TOP-DOWN' },
    { key: 'HISTORY', value: null, comment: 'written by the test' },
  ];
  const files: { name: string; bitpix: 8 | 16 | 32 | -32 | -64; data: number[]; bzero?: number; bscale?: number; want: number[]; cards?: FitsCard[] }[] = [
    // physical 0..65535 as BZERO 32768; out-of-range values clamp, 1.6 rounds to 2
    { name: 'w-u16', bitpix: 16, bzero: 32768, data: [0, 65535, 1.6, 70000, -5, ...ramp(3000).slice(5)], want: [0, 65535, 2, 65535, 0, ...ramp(3000).slice(5)], cards },
    { name: 'w-u8', bitpix: 8, data: ramp(12), want: ramp(12) },
    // stored = round((v - 10) / 2)
    { name: 'w-i32s', bitpix: 32, bzero: 10, bscale: 2, data: ramp(1001), want: ramp(1001).map((v) => 10 + 2 * Math.round((v - 10) / 2)) },
    { name: 'w-f32', bitpix: -32, data: [NaN, ...ramp(0.1).slice(1)], want: [NaN, ...ramp(0.1).slice(1).map(Math.fround)] },
    { name: 'w-f64', bitpix: -64, data: ramp(Math.PI), want: ramp(Math.PI) },
  ];
  let headers: { file: string; header: Record<string, unknown>; comments: Record<string, string>; history: string[]; size: number }[] = [];

  beforeAll(() => {
    const paths = files.map((f) => {
      const p = path.join(outDir, `${f.name}.fits`);
      writeFileSync(p, encodeFits({ width: w, height: h, data: f.data, bitpix: f.bitpix, bzero: f.bzero, bscale: f.bscale, cards: f.cards }));
      return p;
    });
    headers = JSON.parse(run(py, ['read', ...paths]));
  });

  for (const [k, f] of files.entries()) {
    it(f.name, () => {
      const hd = headers[k];
      expect(hd.size % 2880).toBe(0);
      expect(hd.header.BITPIX).toBe(f.bitpix);
      expect([hd.header.NAXIS, hd.header.NAXIS1, hd.header.NAXIS2]).toEqual([2, w, h]);
      const got = f64(`${hd.file}.f64`);
      let bad = 0;
      f.want.forEach((v, i) => { if (Number.isNaN(v) ? !Number.isNaN(got[i]) : got[i] !== v) bad++; });
      expect(bad).toBe(0);
    });
  }

  it('custom cards come back with their values and comments', () => {
    const hd = headers[0];
    expect(hd.header.OBSERVER).toBe("O'Hara's / team");
    expect(hd.comments.OBSERVER).toBe('quote and slash');
    expect(hd.header.FLAG).toBe(false);
    expect(hd.header.EXPTIME).toBe(12.5);
    expect(hd.header.TINY).toBe(1.25e-12);
    expect(hd.header.COUNT).toBe(-17);
    expect(hd.header.BZERO).toBe(32768);
    expect(hd.header.ROWORDER).toBe('TOP-DOWN');
    expect(hd.history).toEqual(['written by the test']);
    // stored codes seen by astropy without scaling: physical 0 -> -32768
    expect(f64(`${hd.file}.stored.f64`)[0]).toBe(-32768);
  });
});
