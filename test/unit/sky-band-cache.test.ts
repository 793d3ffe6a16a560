// The asterism bands' disk cache (core/sky/band-cache.ts): a band read back from the cache is the
// band the builder makes, array for array (the builder is the reference: the cache must change
// nothing), damaged files fall back to building, the pruning rules keep the versions in use and
// delete the stale ones, and two processes filling and pruning one cache at once both get the
// built bands.
import { spawn } from 'node:child_process';
import { mkdtempSync, readdirSync, rmSync, statSync, truncateSync, utimesSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildBandIndex, type BandIndex } from '../../core/sky/asterism.ts';
import { BAND_FORMAT, KEEP_VERSIONS, loadBand, pruneCache, saveBand, versionOf } from '../../core/sky/band-cache.ts';
import { bandRange } from '../../core/sky/bands.ts';
import { bundledCatalogue } from '../../core/sky/bundled.ts';

const dirs: string[] = [];
const tempDir = (tag: string) => { const d = mkdtempSync(path.join(os.tmpdir(), `skyloupe-bandcache-${tag}-`)); dirs.push(d); return d; };
const saved = process.env.SKYLOUPE_SKY_CACHE;
let cacheDir: string;

beforeAll(() => {
  cacheDir = tempDir('rt');
  process.env.SKYLOUPE_SKY_CACHE = cacheDir;
});

afterAll(() => {
  if (saved === undefined) delete process.env.SKYLOUPE_SKY_CACHE; else process.env.SKYLOUPE_SKY_CACHE = saved;
  for (const d of dirs) rmSync(d, { recursive: true, force: true });
});

function expectSameBand(a: BandIndex, b: BandIndex): void {
  expect(b.count).toBe(a.count);
  expect([b.dLo, b.dHi]).toEqual([a.dLo, a.dHi]);
  expect(b.starGrid).toEqual(a.starGrid);
  for (const k of ['stars', 'starCellStart', 'starOrder', 'quads', 'codes', 'binStart'] as const) {
    expect(b[k].constructor).toBe(a[k].constructor);
    expect(Buffer.from(b[k].buffer, b[k].byteOffset, b[k].byteLength).equals(Buffer.from(a[k].buffer, a[k].byteOffset, a[k].byteLength)), k).toBe(true);
  }
}

describe('a band read back from the cache', () => {
  const cat = bundledCatalogue();
  for (const k of [3, 8, 12]) {
    it(`is the built band, array for array (band ${k})`, () => {
      const { dLo, dHi } = bandRange(k);
      const built = buildBandIndex(cat, dLo, dHi);
      const key = `${cat.fingerprint}-${k}-6-3-8`;
      saveBand(key, built);
      const back = loadBand(key, cat, dLo, dHi);
      expect(back).not.toBeNull();
      expectSameBand(built, back!);
    });
  }

  it('stores only what cannot be recomputed quickly (stars, asterisms, codes)', () => {
    const { dLo, dHi } = bandRange(8);
    const b = buildBandIndex(cat, dLo, dHi);
    const file = path.join(cacheDir, `band-${BAND_FORMAT}-${cat.fingerprint}-8-6-3-8.bin`);
    expect(statSync(file).size).toBe(9 * 8 + b.stars.byteLength + b.quads.byteLength + b.codes.byteLength);
  });

  it('is refused when damaged, foreign or for another band: the caller builds instead', () => {
    const k = 12;
    const { dLo, dHi } = bandRange(k);
    const key = `${cat.fingerprint}-${k}-6-3-8`;
    const file = path.join(cacheDir, `band-${BAND_FORMAT}-${key}.bin`);
    expect(loadBand(key, cat, dLo, dHi)).not.toBeNull();
    // the wrong band's size range
    expect(loadBand(key, cat, dLo * 1.01, dHi)).toBeNull();
    truncateSync(file, statSync(file).size - 4);
    expect(loadBand(key, cat, dLo, dHi)).toBeNull();
    writeFileSync(file, 'not a band at all, just some text that is long enough to have a header.........');
    expect(loadBand(key, cat, dLo, dHi)).toBeNull();
    expect(loadBand(`${cat.fingerprint}-99-6-3-8`, cat, dLo, dHi)).toBeNull(); // no file
  });
});

describe('pruning the cache', () => {
  const HOUR = 3600_000, DAY = 24 * HOUR;
  const now = Date.now();
  function put(dir: string, name: string, ageMs: number): void {
    writeFileSync(path.join(dir, name), 'x');
    const t = new Date(now - ageMs);
    utimesSync(path.join(dir, name), t, t);
  }

  it('reads versions from file names', () => {
    expect(versionOf(`band-${BAND_FORMAT}-d81d1243aeff48c51b225c-11-6-3-8.bin`)).toEqual({ version: `${BAND_FORMAT}-d81d1243aeff48c51b225c-6-3-8`, format: BAND_FORMAT });
    expect(versionOf('band-3-abc-0-6-3-8.bin')).toEqual({ version: '3-abc-6-3-8', format: 3 });
    expect(versionOf('notes.txt')).toBeNull();
    expect(versionOf('band-4-abc-0-6-3-8.bin.77.x1.tmp')).toBeNull();
  });

  it(`keeps the version in use and the ${KEEP_VERSIONS - 1} most recently used others, deletes the rest and dead writers' temporary files`, () => {
    const dir = tempDir('prune');
    const f = BAND_FORMAT;
    put(dir, `band-${f}-cur-0-6-3-8.bin`, 30 * DAY); // in use: kept however old
    put(dir, `band-${f}-cur-1-6-3-8.bin`, 30 * DAY);
    put(dir, `band-${f}-aaa-0-6-3-8.bin`, 1 * HOUR);
    put(dir, `band-${f}-aaa-1-6-3-8.bin`, 50 * HOUR); // the version's last use is its newest file
    put(dir, `band-${f}-bbb-0-6-3-8.bin`, 2 * HOUR);
    put(dir, `band-${f}-ccc-0-6-3-8.bin`, 3 * HOUR); // third other: over the cap
    put(dir, `band-${f}-ddd-0-6-3-8.bin`, 8 * DAY);
    put(dir, `band-${f}-cur-2-6-3-8.bin.123.ab1.tmp`, 2 * HOUR); // its writer died
    put(dir, `band-${f}-cur-3-6-3-8.bin.124.ab2.tmp`, 60_000); // a writer at work
    put(dir, 'notes.txt', 100 * DAY); // not the cache's
    const gone = pruneCache(dir, `${f}-cur-6-3-8`, now);
    expect(gone.sort()).toEqual([`band-${f}-ccc-0-6-3-8.bin`, `band-${f}-cur-2-6-3-8.bin.123.ab1.tmp`, `band-${f}-ddd-0-6-3-8.bin`]);
    expect(readdirSync(dir).sort()).toEqual([
      `band-${f}-aaa-0-6-3-8.bin`, `band-${f}-aaa-1-6-3-8.bin`, `band-${f}-bbb-0-6-3-8.bin`,
      `band-${f}-cur-0-6-3-8.bin`, `band-${f}-cur-1-6-3-8.bin`, `band-${f}-cur-3-6-3-8.bin.124.ab2.tmp`, 'notes.txt',
    ]);
  });

  it('deletes an older format unused for a day, keeps one a newer skyloupe uses', () => {
    const dir = tempDir('formats');
    const f = BAND_FORMAT;
    put(dir, `band-${f}-cur-0-6-3-8.bin`, 0);
    put(dir, `band-${f - 1}-cur-0-6-3-8.bin`, 2 * DAY);
    put(dir, `band-${f - 1}-cur-1-6-3-8.bin`, 2 * HOUR); // an older skyloupe used this version two hours ago
    put(dir, `band-${f + 1}-cur-0-6-3-8.bin`, 2 * DAY);
    expect(pruneCache(dir, `${f}-cur-6-3-8`, now)).toEqual([]);
    put(dir, `band-${f - 1}-cur-1-6-3-8.bin`, 30 * HOUR);
    expect(pruneCache(dir, `${f}-cur-6-3-8`, now).sort()).toEqual([`band-${f - 1}-cur-0-6-3-8.bin`, `band-${f - 1}-cur-1-6-3-8.bin`]);
  });

  it('marks a version used when it loads a band from it', () => {
    const cat = bundledCatalogue();
    const k = 13;
    const { dLo, dHi } = bandRange(k);
    const key = `${cat.fingerprint}-${k}-6-3-8`;
    saveBand(key, buildBandIndex(cat, dLo, dHi));
    const file = path.join(cacheDir, `band-${BAND_FORMAT}-${key}.bin`);
    const old = new Date(now - 3 * DAY);
    utimesSync(file, old, old);
    expect(loadBand(key, cat, dLo, dHi)).not.toBeNull();
    expect(now - statSync(file).mtimeMs).toBeLessThan(HOUR);
  });
});

describe('two processes at once', () => {
  function child(dir: string, bands: number[]): Promise<Record<string, string>> {
    return new Promise((resolve, reject) => {
      const p = spawn(process.execPath, ['bin/run-ts.mjs', 'test/unit/sky-band-cache-child.ts', ...bands.map(String)], {
        env: { ...process.env, SKYLOUPE_SKY_CACHE: dir }, stdio: ['ignore', 'pipe', 'inherit'],
      });
      let out = '';
      p.stdout.on('data', (c: Buffer) => { out += c.toString(); });
      p.once('exit', (code) => (code === 0 ? resolve(JSON.parse(out.trim().split('\n').pop()!)) : reject(new Error(`child exited ${code}`))));
    });
  }

  it('fill and prune one cache together, and both get the bands the builder makes', async () => {
    const dir = tempDir('two');
    const f = BAND_FORMAT;
    writeFileSync(path.join(dir, `band-${f - 1}-old-0-6-3-8.bin`), 'x');
    const old = new Date(Date.now() - 2 * 24 * 3600_000);
    utimesSync(path.join(dir, `band-${f - 1}-old-0-6-3-8.bin`), old, old);
    const bands = [9, 10, 11, 12, 13];
    const [a, b] = await Promise.all([child(dir, bands), child(dir, [...bands].reverse())]);
    const fresh = await child(tempDir('ref'), bands); // the reference: built in an empty cache
    expect(a).toEqual(fresh);
    expect(b).toEqual(fresh);
    const names = readdirSync(dir).sort();
    expect(names).toHaveLength(bands.length);
    for (const n of names) expect(n).toMatch(new RegExp(`^band-${f}-[0-9a-z]+-\\d+-6-3-8\\.bin$`));
    // a third process reads them back
    expect(await child(dir, bands)).toEqual(fresh);
  });
});
