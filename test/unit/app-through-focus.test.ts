/**
 * A focus series through the desktop program's bridge: the engine worker must give what
 * `skyloupe through-focus` gives on the same frames (the same steps, core/cli/through-focus.ts),
 * positions typed or read from the header (FOCUSPOS / FOCPOS), bad series refused in words of
 * the page (no command-line flags, µm), and the browser-mode route streams the same outcome.
 * Frames: rendered by the engine's simulator with a known tilt (recovery truth).
 */
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import http from 'node:http';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { renderScene } from '../../core/simulate/render.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { fitsFocusPosition, headerFocusPosition } from '../../core/series/focus-position.ts';
import { EngineSession } from '../../app/engine/session.ts';
import { CameraMemory } from '../../app/engine/memory.ts';
import { focusSeries } from '../../app/engine/validate.ts';
import { pageWords } from '../../app/engine/focus-series.ts';
import { startServer, splitSeriesBody, type RunningServer } from '../../app/serve/server.ts';
import { SOURCE_WORKER_URL, DEMO_FRAME } from '../../app/serve/sources.ts';
import type { FocusSeriesResult, Outcome, Progress } from '../../app/preload/bridge.ts';
import { frameScene, type SeriesScene } from '../reference/recovery-focus-series.ts';

const scene: SeriesScene = { seed: 61, focusUm: 5, width: 640, height: 420, stars: 150, aberrations: { tiltXUmAcross: 20 } };
const positions = [-55, -25, 5, 35, 65];
/** Focuser steps of 2.5 µm written as FOCUSPOS. */
const STEP = 2.5;
let dir: string;
const frames = new Map<number, Uint8Array>();
let other: Uint8Array;
let session: EngineSession;
let server: RunningServer;

const file = (p: number) => path.join(dir, `tf${p}.fits`);

beforeAll(async () => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-tf-app-'));
  const first = renderScene(frameScene(scene, positions[0], 0) as Parameters<typeof renderScene>[0]);
  const field = first.truth.stars.map((t) => ({ x: t.xNominal, y: t.yNominal, fluxE: t.fluxE }));
  positions.forEach((p, k) => {
    const sc = frameScene(scene, p, k) as Record<string, unknown>;
    sc.stars = field.map((f) => ({ x: f.x + 0.7 * k, y: f.y - 0.4 * k, fluxE: f.fluxE }));
    const res = renderScene(sc as unknown as Parameters<typeof renderScene>[0]);
    res.cards.push({ key: 'FOCUSPOS', value: p / STEP, comment: 'focuser position, steps' });
    const b = fitsBytes(res);
    frames.set(p, b);
    writeFileSync(file(p), b);
  });
  other = fitsBytes(renderScene(frameScene({ ...scene, seed: 62 }, 5, 9) as Parameters<typeof renderScene>[0]));
  session = new EngineSession({ workerUrl: SOURCE_WORKER_URL, demoPath: DEMO_FRAME, memory: new CameraMemory(null) });
  server = await startServer({ session, assets: { js: '', css: '' }, port: 0 });
}, 120_000);

afterAll(async () => {
  await server?.close();
  await session?.close();
  rmSync(dir, { recursive: true, force: true });
});

const ab = (b: Uint8Array) => b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength) as ArrayBuffer;
const req = (ps: number[], position: (p: number) => number | null = (p) => p, extra: Record<string, unknown> = {}) =>
  ({ frames: ps.map((p) => ({ name: `tf${p}.fits`, bytes: ab(frames.get(p)!), position: position(p) })), ...extra });

function value(o: Outcome<FocusSeriesResult>): FocusSeriesResult {
  if (!o.ok) throw new Error(`expected a result, got ${o.kind}: ${o.message}`);
  return o.value;
}

describe('focus series in the engine worker', () => {
  let typed: FocusSeriesResult;
  const seen: Progress[] = [];

  beforeAll(async () => {
    typed = value(await session.throughFocus(focusSeries(req(positions)), (p) => seen.push(p)));
  }, 120_000);

  it('gives what the command line gives on the same frames', () => {
    const r = spawnSync(process.execPath, ['bin/skyloupe.mjs', 'through-focus', ...positions.flatMap((p) => ['--at', `${p}=${file(p)}`]), '--json', '-'], { encoding: 'utf8', timeout: 120_000 });
    expect(r.status, r.stderr).toBe(0);
    const cli = JSON.parse(r.stdout);
    const page = typed.result;
    expect(page.schema).toBe('skyloupe.throughfocus/1');
    expect(page.positionsUm).toEqual(cli.positionsUm);
    expect(page.zones.map((z) => z.bestFocusUm)).toEqual(cli.zones.map((z: { bestFocusUm: number | null }) => z.bestFocusUm));
    expect(page.tilt).toEqual(cli.tilt);
    expect(page.curvature).toEqual(cli.curvature);
    expect(page.spherical).toEqual(cli.spherical);
    // the pictures' inputs (frame extras) came along: stamps and the light radii behind the spherical fit
    expect(page.stamps.length).toBe(cli.stamps.length);
    expect(page.stamps.length).toBeGreaterThan(0);
    expect(page.findings.map((f) => f.message)).toEqual(cli.findings.map((f: { message: string }) => f.message));
  });

  it('recovers the rendered tilt (simulator truth: 20 µm across the width)', () => {
    const t = typed.result.tilt!;
    expect(t.significant).toBe(true);
    // through focus reports the change of best-focus position: magnitude of the scene's tilt
    expect(Math.abs(t.acrossFrameUm.x)).toBeGreaterThan(20 - 3 * t.acrossFrameErrUm.x - 3);
    expect(Math.abs(t.acrossFrameUm.x)).toBeLessThan(20 + 3 * t.acrossFrameErrUm.x + 3);
  });

  it('reports the frames as typed and a progress that only grows to the end', () => {
    expect(typed.positions.map((p) => [p.given, p.from])).toEqual(positions.map((p) => [p, 'typed']));
    const overall = seen.map((p) => p.overall);
    expect(overall.length).toBeGreaterThan(positions.length);
    for (let i = 1; i < overall.length; i++) expect(overall[i]).toBeGreaterThanOrEqual(overall[i - 1]);
    expect(seen.at(-1)).toMatchObject({ stage: 'done', overall: 1 });
  });

  it('reads positions from FOCUSPOS in focuser steps, scaled by the step size', async () => {
    const r = value(await session.throughFocus(focusSeries(req(positions, () => null, { stepUnitUm: STEP }))));
    expect(r.positions.map((p) => [p.given, p.from])).toEqual(positions.map((p) => [p / STEP, 'FOCUSPOS']));
    expect(r.result.positionsUm).toEqual(positions);
    expect(r.result.stepUnitUm).toBe(STEP);
    expect(r.result.tilt).toEqual(typed.result.tilt);
  }, 120_000);

  it('says which frame lacks a position and what to do', async () => {
    const bare = fitsBytes(renderScene(frameScene(scene, 5, 2) as Parameters<typeof renderScene>[0]));
    const o = await session.throughFocus(focusSeries({ frames: [
      { name: 'a.fits', bytes: ab(frames.get(-25)!), position: null },
      { name: 'bare.fits', bytes: ab(bare), position: null },
      { name: 'c.fits', bytes: ab(frames.get(35)!), position: null },
    ] }));
    expect(o).toMatchObject({ ok: false, kind: 'usage' });
    expect(!o.ok && o.message).toMatch(/^bare\.fits: no focuser position typed and none in its header \(FOCUSPOS or FOCPOS\)/);
  }, 120_000);

  it('cancel stops a running series and the next one still runs', async () => {
    let started!: () => void;
    const going = new Promise<void>((r) => { started = r; });
    const p = session.throughFocus(focusSeries(req(positions)), (pr) => { if (pr.stage === 'series' && pr.overall > 0) started(); });
    await going;
    session.cancel();
    expect(await p).toMatchObject({ ok: false, kind: 'cancelled' });
    const again = value(await session.throughFocus(focusSeries(req([-25, 5, 35, 65]))));
    expect(again.result.positionsUm).toEqual([-25, 5, 35, 65]);
  }, 120_000);

  it('refuses bad series in the page\'s words: another field, a series that never crosses focus', async () => {
    const o1 = await session.throughFocus(focusSeries({ frames: [
      { name: 'a.fits', bytes: ab(frames.get(-25)!), position: -25 },
      { name: 'other.fits', bytes: ab(other), position: 5 },
      { name: 'c.fits', bytes: ab(frames.get(35)!), position: 35 },
    ] }));
    expect(o1.ok).toBe(false);
    expect(!o1.ok && o1.message).toMatch(/does not show the same stars/);
    // only frames inside focus: the stars shrink toward the largest position
    const o2 = await session.throughFocus(focusSeries({
      frames: [-55, -25].map((p) => ({ name: `tf${p}.fits`, bytes: ab(frames.get(p)!), position: p }))
        .concat([{ name: 'tf-55b.fits', bytes: ab(frames.get(-55)!), position: -40 }]),
    }));
    expect(o2.ok).toBe(false);
    const m2 = !o2.ok ? o2.message : '';
    expect(m2).toMatch(/never crosses focus.*Extend the series toward larger positions/);
    for (const m of [!o1.ok ? o1.message : '', m2]) {
      expect(m).not.toMatch(/--at|through-focus:|\bum\b/);
    }
    expect(m2).toMatch(/µm/);
  }, 120_000);
});

describe('checks before anything runs', () => {
  const f = (position: number | null, name = 'a.fits') => ({ name, bytes: new ArrayBuffer(8), position });
  it('two frames: use the focus pair; one frame; positions all equal; bad numbers', () => {
    expect(() => focusSeries({ frames: [f(0), f(10)] })).toThrow(/use the focus pair/);
    expect(() => focusSeries({ frames: [f(0)] })).toThrow(/three or more frames/);
    expect(() => focusSeries({ frames: [f(10), f(10), f(10)] })).toThrow(/same position \(10\)/);
    expect(() => focusSeries({ frames: [f(0), f(10), f(Number.NaN)] })).toThrow(/must be a number/);
    expect(() => focusSeries({ frames: [f(0), f(10), f(20)], stepUnitUm: -2 })).toThrow(/focuser step/);
    expect(() => focusSeries({ frames: [f(0), f(10), f(20)], wavelengthNm: 5 })).toThrow(/nanometres/);
    expect(() => focusSeries({ frames: [f(0), f(10), f(20, '../../etc/passwd')] })).not.toThrow();
    expect(focusSeries({ frames: [f(0), f(10), f(20, '../x/b.fits')] }).frames[2].name).toBe('b.fits');
  });

  it('core messages lose the command-line flags and read µm', () => {
    expect(pageWords('through-focus: the frames sit at 30 um; use focus-pair NEAR FAR --step UM, or (--at UM=FRAME) more'))
      .toBe('the frames sit at 30 µm; use the focus pair, or more');
  });
});

describe('header positions', () => {
  /** A primary header written card by card (FITS Standard 4.0 §4.1: 80-character cards, 2880-byte blocks, END). */
  function header(cards: string[]): Uint8Array {
    const text = [...cards, 'END'].map((c) => c.padEnd(80)).join('');
    const blocks = Math.ceil(text.length / 2880);
    return new TextEncoder().encode(text.padEnd(blocks * 2880 + 2880));
  }
  it('reads FOCUSPOS, else FOCPOS, from the bytes as the full reader does', () => {
    const base = ['SIMPLE  =                    T', 'BITPIX  =                   16', 'NAXIS   =                    0'];
    expect(fitsFocusPosition(header([...base, 'FOCPOS  =                 1234 / steps']))).toEqual({ value: 1234, keyword: 'FOCPOS' });
    expect(fitsFocusPosition(header([...base, 'FOCPOS  =                 1234', 'FOCUSPOS=               -12.5 / steps']))).toEqual({ value: -12.5, keyword: 'FOCUSPOS' });
    expect(fitsFocusPosition(header([...base, "FOCUSPOS= '  880  '"]))).toEqual({ value: 880, keyword: 'FOCUSPOS' });
    expect(fitsFocusPosition(header(base))).toBeNull();
    expect(fitsFocusPosition(new TextEncoder().encode('not a fits file'))).toBeNull();
    // the rendered frames: the page's quick reader and the engine's FITS reader agree
    for (const p of positions) {
      const b = frames.get(p)!;
      expect(fitsFocusPosition(b)).toEqual({ value: p / STEP, keyword: 'FOCUSPOS' });
      expect(headerFocusPosition(decodeFits(b).meta)).toEqual({ value: p / STEP, keyword: 'FOCUSPOS' });
    }
  });
});

describe('browser mode route', () => {
  function post(body: Buffer): Promise<{ status: number; text: string }> {
    return new Promise((resolve, reject) => {
      const r = http.request({ host: '127.0.0.1', port: server.port, path: '/api/through-focus', method: 'POST', headers: { 'X-Skyloupe-Token': server.token, 'Content-Type': 'application/octet-stream' } }, (res) => {
        const chunks: Buffer[] = [];
        res.on('data', (c: Buffer) => chunks.push(c));
        res.on('end', () => resolve({ status: res.statusCode ?? 0, text: Buffer.concat(chunks).toString('utf8') }));
      });
      r.on('error', reject);
      r.end(body);
    });
  }
  /** The body the page's bridge sends (renderer/http-bridge.ts). */
  function body(ps: number[], head: Record<string, unknown> = {}): Buffer {
    const h = Buffer.from(JSON.stringify({ frames: ps.map((p) => ({ name: `tf${p}.fits`, position: p, size: frames.get(p)!.length })), ...head }));
    const len = Buffer.alloc(4);
    len.writeUInt32LE(h.length, 0);
    return Buffer.concat([len, h, ...ps.map((p) => Buffer.from(frames.get(p)!))]);
  }

  it('streams progress and the series result', async () => {
    const r = await post(body([-25, 5, 35, 65]));
    expect(r.status).toBe(200);
    const lines = r.text.trim().split('\n').map((l) => JSON.parse(l));
    expect(lines.some((l) => l.type === 'progress')).toBe(true);
    const last = lines.at(-1);
    expect(last.type).toBe('outcome');
    expect(last.outcome.ok, JSON.stringify(last.outcome).slice(0, 300)).toBe(true);
    expect(last.outcome.value.result.positionsUm).toEqual([-25, 5, 35, 65]);
  }, 120_000);

  it('refuses a malformed upload with 400 and one message', async () => {
    const good = body([-25, 5, 35]);
    for (const bad of [Buffer.alloc(2), good.subarray(0, good.length - 10), Buffer.concat([good, Buffer.alloc(3)])]) {
      const r = await post(bad);
      expect(r.status).toBe(400);
      expect(JSON.parse(r.text)).toMatchObject({ ok: false, kind: 'usage' });
    }
    expect(() => splitSeriesBody(Buffer.from([255, 255, 255, 255]))).toThrow(/malformed/);
    const two = await post(body([-25, 5]));
    expect(two.status).toBe(400);
    expect(JSON.parse(two.text).message).toMatch(/focus pair/);
  });
});
