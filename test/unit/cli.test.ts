import { describe, expect, it, beforeAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdirSync, readFileSync, writeFileSync, existsSync, readdirSync } from 'node:fs';
import path from 'node:path';
import { encodeFits } from '../../core/frame/fits-write.ts';
import { mulberry32, normal } from '../helpers/rng.ts';

const dir = path.resolve('test-output/cli');

function run(args: string[], env: NodeJS.ProcessEnv = process.env) {
  const r = spawnSync(process.execPath, ['bin/skyloupe.mjs', ...args], { encoding: 'utf8', timeout: 60_000, env });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

const sha = (p: string) => createHash('sha256').update(readFileSync(p)).digest('hex');

beforeAll(() => {
  mkdirSync(dir, { recursive: true });
  const w = 300;
  const h = 200;
  const g = normal(mulberry32(9));
  const noise = Float32Array.from({ length: w * h }, () => 1000 + 10 * g());
  writeFileSync(path.join(dir, 'noise.fits'), encodeFits({ width: w, height: h, data: noise, bitpix: -32 }));
  writeFileSync(path.join(dir, 'flat.fits'), encodeFits({ width: w, height: h, data: new Float32Array(w * h).fill(7), bitpix: -32 }));
  const stars = Float32Array.from(noise);
  const r = mulberry32(10);
  for (let k = 0; k < 40; k++) {
    const x0 = 15 + r() * (w - 30);
    const y0 = 15 + r() * (h - 30);
    for (let y = Math.floor(y0) - 8; y <= y0 + 8; y++) for (let x = Math.floor(x0) - 8; x <= x0 + 8; x++) {
      stars[y * w + x] += 3000 * Math.exp(-((x - x0) ** 2 + (y - y0) ** 2) / (2 * 1.3 ** 2));
    }
  }
  writeFileSync(path.join(dir, 'stars.fits'), encodeFits({ width: w, height: h, data: stars, bitpix: -32 }));
  const full = readFileSync(path.join(dir, 'stars.fits'));
  writeFileSync(path.join(dir, 'truncated.fits'), full.subarray(0, 2880 + 5000));
  writeFileSync(path.join(dir, 'empty.fits'), new Uint8Array(0));
  writeFileSync(path.join(dir, 'garbage.fits'), Buffer.from('this is not an image at all\n'.repeat(200)));
});

describe('skyloupe CLI exit codes and messages', () => {
  it('--help on every command exits 0', () => {
    for (const args of [['--help'], ['analyze', '--help'], ['simulate', '--help']]) {
      const r = run(args);
      expect(r.code).toBe(0);
      expect(r.out).toMatch(/usage: skyloupe/);
    }
  });

  it('bad usage exits 2 with one line', () => {
    for (const args of [[], ['frobnicate'], ['analyze'], ['analyze', 'a.fits', '--bogus'], ['analyze', 'a.fits', '--f-number', 'abc']]) {
      const r = run(args);
      expect(r.code, args.join(' ')).toBe(2);
      if (args.length) expect(r.err.trim().split('\n')).toHaveLength(1);
    }
  });

  it('unreadable input exits 3 with a clear one-line message, no stack trace', () => {
    const cases: [string, RegExp][] = [
      [path.join(dir, 'missing.fits'), /no such file|not found|does not exist/i],
      [dir, /directory/i],
      [path.join(dir, 'empty.fits'), /empty/i],
      [path.join(dir, 'truncated.fits'), /truncated/i],
      [path.join(dir, 'garbage.fits'), /not a|unknown|unsupported|format/i],
    ];
    for (const [file, re] of cases) {
      const r = run(['analyze', file]);
      expect(r.code, file).toBe(3);
      const lines = r.err.trim().split('\n');
      expect(lines, file).toHaveLength(1);
      expect(lines[0]).toMatch(re);
      expect(r.err).not.toMatch(/\bat .*\.ts:\d+/);
    }
  });

  it('frames without stars exit 4', () => {
    for (const f of ['noise.fits', 'flat.fits']) {
      const r = run(['analyze', path.join(dir, f)]);
      expect(r.code, f).toBe(4);
      expect(r.err.trim().split('\n')).toHaveLength(1);
    }
  });

  it('analyses a frame, writes JSON and CSV atomically, and never touches the input', () => {
    const input = path.join(dir, 'stars.fits');
    const before = sha(input);
    const json = path.join(dir, 'stars.report.json');
    const csv = path.join(dir, 'stars.csv');
    const r = run(['analyze', input, '--json', json, '--csv', csv, '--focal-length', '400', '--pixel-size', '3.76', '--f-number', '4']);
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/median FWHM/);
    expect(sha(input)).toBe(before);
    const rep = JSON.parse(readFileSync(json, 'utf8'));
    expect(rep.schema).toBe('skyloupe.report/1');
    expect(rep.frame.optics.focalLengthMm).toBe(400);
    expect(rep.frame.optics.source.focalLengthMm).toBe('user');
    // plate scale = 206.265 * p / f (definition of the radian; optics.md section 7)
    expect(rep.frame.optics.plateScaleArcsecPerPx).toBeCloseTo((206.265 * 3.76) / 400, 4);
    expect(rep.stars.length).toBeGreaterThanOrEqual(35);
    const lines = readFileSync(csv, 'utf8').trim().split('\r\n');
    expect(lines.length).toBe(rep.stars.length + 1);
    expect(readdirSync(dir).filter((f) => f.endsWith('.tmp'))).toHaveLength(0);
    // the report must not overwrite the input
    const clash = run(['analyze', input, '--json', input]);
    expect(clash.code).toBe(2);
    expect(sha(input)).toBe(before);
    expect(existsSync(input)).toBe(true);
  });

  it('the prebuilt bundle and the TypeScript sources give the same report', () => {
    const file = path.join(dir, 'stars.fits');
    const bundled = run(['analyze', file, '--json', '-', '--quiet']);
    const sources = run(['analyze', file, '--json', '-', '--quiet'], { ...process.env, SKYLOUPE_FROM_SOURCES: '1' });
    expect(bundled.code).toBe(0);
    expect(sources.code).toBe(0);
    const a = JSON.parse(bundled.out), b = JSON.parse(sources.out);
    expect(a.stars.length).toBeGreaterThan(20);
    expect(a.stars).toEqual(b.stars);
    expect(a.diagnosis).toEqual(b.diagnosis);
    expect(existsSync(path.resolve('dist/cli'))).toBe(true);
  });
});
