/**
 * `skyloupe through-focus` from the command line: usage errors exit 2 with one line, a small
 * rendered series (engine simulator) gives the skyloupe.throughfocus/1 JSON and the HTML page,
 * written atomically, inputs untouched.
 */
import { describe, expect, it, beforeAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdirSync, readFileSync, writeFileSync, readdirSync, existsSync, rmSync } from 'node:fs';
import path from 'node:path';
import { renderScene } from '../../core/simulate/render.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { frameScene, type SeriesScene } from '../reference/recovery-focus-series.ts';

const dir = path.resolve('test-output/cli-through-focus');

function run(args: string[]) {
  const r = spawnSync(process.execPath, ['bin/skyloupe.mjs', ...args], { encoding: 'utf8', timeout: 120_000 });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

const sha = (p: string) => createHash('sha256').update(readFileSync(p)).digest('hex');
const scene: SeriesScene = { seed: 61, focusUm: 5, width: 640, height: 420, stars: 150, aberrations: { tiltXUmAcross: 20, sphericalUm: -30 } };
const positions = [-55, -25, 5, 35, 65];
const file = (p: number) => path.join(dir, `tf${p}.fits`);

beforeAll(() => {
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  const first = renderScene(frameScene(scene, positions[0], 0) as Parameters<typeof renderScene>[0]);
  const field = first.truth.stars.map((t) => ({ x: t.xNominal, y: t.yNominal, fluxE: t.fluxE }));
  positions.forEach((p, k) => {
    const sc = frameScene(scene, p, k) as Record<string, unknown>;
    sc.stars = field.map((f) => ({ x: f.x + 0.7 * k, y: f.y - 0.4 * k, fluxE: f.fluxE }));
    writeFileSync(file(p), fitsBytes(renderScene(sc as unknown as Parameters<typeof renderScene>[0])));
  });
  // A frame inside focus, for a series that never crosses it.
  const inside = frameScene(scene, -40, 5) as Record<string, unknown>;
  inside.stars = field.map((f) => ({ x: f.x + 0.3, y: f.y - 0.2, fluxE: f.fluxE }));
  writeFileSync(file(-40), fitsBytes(renderScene(inside as unknown as Parameters<typeof renderScene>[0])));
  // A frame of another camera size.
  writeFileSync(path.join(dir, 'small.fits'), fitsBytes(renderScene(frameScene({ ...scene, width: 320, height: 210, stars: 60 }, 5, 7) as Parameters<typeof renderScene>[0])));
  // A frame of another field.
  const other = frameScene({ ...scene, seed: 62 }, 5, 9);
  writeFileSync(path.join(dir, 'other.fits'), fitsBytes(renderScene(other as Parameters<typeof renderScene>[0])));
});

describe('skyloupe through-focus', () => {
  it('--help exits 0 and the main help lists the command', () => {
    const r = run(['through-focus', '--help']);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/usage: skyloupe through-focus --at UM=FRAME/);
    expect(run(['--help']).out).toMatch(/through-focus/);
  });

  it('bad usage exits 2 with one line: two frames (use focus-pair), a malformed --at, a bad option value', () => {
    for (const [args, msg] of [
      [['through-focus', '--at', `0=${file(5)}`, '--at', `30=${file(35)}`], /focus-pair/],
      [['through-focus', '--at', `0=${file(5)}`, '--at', `abc${file(35)}`, '--at', `60=${file(65)}`], /UM=FRAME/],
      [['through-focus', ...positions.flatMap((p) => ['--at', `${p}=${file(p)}`]), '--wavelength', '5'], /nanometres/],
      [['through-focus', file(5)], /--at UM=FRAME/],
    ] as [string[], RegExp][]) {
      const r = run(args);
      expect(r.code, args.join(' ')).toBe(2);
      expect(r.err.trim().split('\n')).toHaveLength(1);
      expect(r.err).toMatch(msg);
    }
  });

  it('bad series exit 2 with what to do: positions all equal, a frame of another field, a series short of focus', () => {
    const same = run(['through-focus', ...positions.slice(0, 3).flatMap((p) => ['--at', `10=${file(p)}`])]);
    expect(same.code).toBe(2);
    expect(same.err).toMatch(/same position/);
    const other = run(['through-focus', '--at', `-25=${file(-25)}`, '--at', `5=${path.join(dir, 'other.fits')}`, '--at', `35=${file(35)}`]);
    expect(other.code).toBe(2);
    expect(other.err).toMatch(/does not show the same stars/);
    // Only the frames inside focus: the stars shrink toward the largest position.
    const short = run(['through-focus', ...[-55, -40, -25].flatMap((p) => ['--at', `${p}=${file(p)}`])]);
    expect(short.code).toBe(2);
    expect(short.err).toMatch(/Extend the series toward larger positions/);
  });

  it('series commands refuse the same picture twice and frames of different sizes, exit 2 (issue 12 item 4)', () => {
    for (const [args, msg] of [
      [['through-focus', '--at', `-25=${file(-25)}`, '--at', `5=${file(5)}`, '--at', `35=${file(-25)}`], /through-focus: .*tf-25\.fits and .*tf-25\.fits are the same picture/],
      [['compare', file(5), file(5)], /compare: .* are the same picture/],
      [['sweep', '--at', `55=${file(5)}`, '--at', `56=${file(35)}`, '--at', `57=${file(5)}`], /sweep: .* are the same picture/],
      [['focus-pair', file(5), file(5), '--step', '30'], /focus-pair: .* are the same picture/],
      [['compare', file(5), path.join(dir, 'small.fits')], /compare: the frames differ in size \(.*640 x 420 px, .*320 x 210 px\)/],
      [['sweep', '--at', `55=${file(5)}`, '--at', `56=${file(35)}`], /at least three/],
    ] as [string[], RegExp][]) {
      const r = run(args);
      expect(r.code, args.join(' ')).toBe(2);
      expect(r.err.trim().split('\n')).toHaveLength(1);
      expect(r.err).toMatch(msg);
    }
  });

  it('writes the JSON and the HTML page, atomically, and leaves the frames as they were', () => {
    const before = positions.map((p) => sha(file(p)));
    const json = path.join(dir, 'series.json');
    const html = path.join(dir, 'series.html');
    // Given in focuser steps of 2.5 um (positions / 2.5), negative ones included.
    const r = run(['through-focus', ...positions.flatMap((p) => ['--at', `${p / 2.5}=${file(p)}`]), '--step-unit', '2.5', '--json', json, '--html', html]);
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/Through focus: 5 frames/);
    expect(r.out).toMatch(/Act on it|Worth a look|Note/);
    const res = JSON.parse(readFileSync(json, 'utf8'));
    expect(res.schema).toBe('skyloupe.throughfocus/1');
    expect(res.positionsUm).toEqual(positions);
    expect(res.stepUnitUm).toBe(2.5);
    expect(res.positionsGiven).toEqual(positions.map((p) => p / 2.5));
    for (const k of ['zones', 'tilt', 'curvature', 'spherical', 'bestFocusUm', 'bestFieldFocusUm', 'findings']) expect(res).toHaveProperty(k);
    expect(res.tilt).toHaveProperty('acrossFrameUm.x');
    expect(res.tilt).toHaveProperty('acrossFrameErrUm');
    expect(res.tilt).toHaveProperty('axisDeg');
    expect(res.tilt).toHaveProperty('significant');
    expect(res.curvature).toHaveProperty('cornerErrUm');
    expect(res.spherical).toHaveProperty('kind');
    expect(res.spherical).toHaveProperty('errUm');
    // Best focus rises to the left (the scene's tilt puts the right side behind focus).
    expect(res.tilt.acrossFrameUm.x).toBeLessThan(0);
    const page = readFileSync(html, 'utf8');
    expect(page).toMatch(/^<!doctype html>/);
    expect((page.match(/<svg /g) ?? []).length).toBeGreaterThanOrEqual(3);
    expect(page).not.toMatch(/THROUGH_FOCUS_[A-Z]+<|<code>THROUGH/);
    expect(readdirSync(dir).filter((f) => f.endsWith('.tmp'))).toHaveLength(0);
    expect(positions.map((p) => sha(file(p)))).toEqual(before);
    expect(existsSync(json)).toBe(true);
  });

  it('refuses to write over an input frame', () => {
    const r = run(['through-focus', ...positions.flatMap((p) => ['--at', `${p}=${file(p)}`]), '--json', file(5)]);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/overwrite an input frame/);
  });
});
