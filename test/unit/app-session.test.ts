/**
 * The host side of the bridge with its real analysis worker: results, progress, stamps,
 * cancel, clear failures, optics remembered per camera, and the exports.
 */
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import sharp from 'sharp';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { encodeFits } from '../../core/frame/fits-write.ts';
import { EngineSession } from '../../app/engine/session.ts';
import { CameraMemory } from '../../app/engine/memory.ts';
import { SOURCE_WORKER_URL, DEMO_FRAME } from '../../app/serve/sources.ts';
import type { AnalysisResult, Progress } from '../../app/preload/bridge.ts';

const W = 640;
const H = 420;
let fits: Uint8Array;
let png: Uint8Array;
let pixels16: Float64Array;
let session: EngineSession;
let cfgDir: string;

beforeAll(async () => {
  const res = renderScene(parseScene({
    schema: 'skyloupe.scene/1', width: W, height: H, seed: 5, stars: { count: 220 },
    psf: { kind: 'optics', seeing: { fwhmPx: 2.6 }, aberrations: { tiltXUmAcross: 30 } },
  }));
  fits = fitsBytes(res);
  // independent decoding of the 16-bit data: big-endian int16 + BZERO 32768 (FITS 4.0 sections 5.2, 5.3)
  const headerEnd = (() => { for (let b = 0; b < fits.length; b += 2880) for (let c = 0; c < 36; c++) if (new TextDecoder().decode(fits.subarray(b + c * 80, b + c * 80 + 8)) === 'END     ') return b + 2880; return -1; })();
  const view = new DataView(fits.buffer, fits.byteOffset + headerEnd, W * H * 2);
  pixels16 = Float64Array.from({ length: W * H }, (_, i) => view.getInt16(2 * i, false) + 32768);
  // the same picture as a 16-bit PNG, which carries no optics (a Uint16Array input keeps 16 bits)
  png = await sharp(Uint16Array.from(pixels16), { raw: { width: W, height: H, channels: 1 } }).toColourspace('grey16').png().toBuffer();
  cfgDir = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-session-'));
  session = new EngineSession({ workerUrl: SOURCE_WORKER_URL, demoPath: DEMO_FRAME, memory: new CameraMemory(path.join(cfgDir, 'cameras.json')), measureWorkers: 0 });
});

afterAll(async () => {
  await session?.close();
  if (cfgDir) rmSync(cfgDir, { recursive: true, force: true });
});

async function ok(p: Promise<{ ok: boolean }>): Promise<AnalysisResult> {
  const o = await p;
  if (!o.ok) throw new Error(`expected success, got ${JSON.stringify(o)}`);
  return (o as { ok: true; value: AnalysisResult }).value;
}

describe('analysis in the worker', () => {
  let r: AnalysisResult;
  const seen: Progress[] = [];

  beforeAll(async () => {
    r = await ok(session.analyze({ name: 'sim.fits', bytes: fits }, undefined, (p) => seen.push(p)));
  });

  it('returns the report with its zone stacks, and the preview', async () => {
    expect(r.report.frame.width).toBe(W);
    expect(r.report.stars.length).toBeGreaterThan(100);
    expect(r.report.findings).toBeDefined();
    expect(r.opticsFrom).toBe('file');
    const meta = await sharp(Buffer.from(r.preview.href.split(',')[1], 'base64')).metadata();
    expect([meta.width, meta.height]).toEqual([W / r.preview.factor, H / r.preview.factor]);
    // the close-ups are the report's own zone stacks (core/field/zone-stack.ts), 3 x 3 zones
    expect(r.report.zonePsf?.zones).toHaveLength(9);
  });

  it('reports progress that only grows and ends done', () => {
    const overall = seen.map((p) => p.overall);
    for (let i = 1; i < overall.length; i++) expect(overall[i]).toBeGreaterThanOrEqual(overall[i - 1]);
    expect(seen.some((p) => p.stage === 'measure')).toBe(true);
    expect(seen.at(-1)!.stage).toBe('done');
    expect(seen.at(-1)!.overall).toBe(1);
  });

  it('cuts stamps from the frame pixels', () => {
    const i = r.report.stars.findIndex((s) => s.flags.length === 0);
    const st = session.stamp(r.id, i);
    if (!st.ok) throw new Error(st.message);
    const s = st.value;
    expect(s.flipY).toBe(true);
    for (let y = 0; y < s.h; y++) for (let x = 0; x < s.w; x++) {
      expect(s.values[y * s.w + x]).toBe(pixels16[(s.y0 + y) * W + s.x0 + x]);
    }
    // the star sits inside its stamp
    expect(r.report.stars[i].x).toBeGreaterThanOrEqual(s.x0);
    expect(r.report.stars[i].x).toBeLessThanOrEqual(s.x0 + s.w - 1);
    expect(session.stamp(r.id, 10_000_000).ok).toBe(false);
    expect(session.stamp('ffffffffffff', 0).ok).toBe(false);
  });

  it('exports the JSON report, the CSV table and the HTML report', () => {
    const j = session.exportFile(r.id, 'json');
    const c = session.exportFile(r.id, 'csv');
    const h = session.exportFile(r.id, 'html');
    if (!j.ok || !c.ok || !h.ok) throw new Error('export failed');
    expect(JSON.parse(j.value.body)).toEqual(JSON.parse(JSON.stringify(r.report))); // JSON has no -0
    expect(j.value.filename).toBe('sim.skyloupe.json');
    // RFC 4180: one header record, one record per star, CRLF line ends
    expect(c.value.body.split('\r\n').filter(Boolean)).toHaveLength(r.report.stars.length + 1);
    expect(h.value.body).toContain(r.preview.href);
    expect(h.value.mime).toBe('text/html');
  });
});

describe('failures as plain messages', () => {
  it('says a file cannot be read', async () => {
    const o = await session.analyze({ name: 'broken.fits', bytes: new TextEncoder().encode('SIMPLE  =                    T / but nothing else') });
    expect(o).toMatchObject({ ok: false, kind: 'unreadable' });
  });

  it('says there are no stars in a flat frame', async () => {
    const flat = encodeFits({ width: 200, height: 150, data: new Float32Array(200 * 150).fill(1000), bitpix: -32 });
    const o = await session.analyze({ name: 'flat.fits', bytes: flat });
    expect(o).toMatchObject({ ok: false, kind: 'no-stars' });
  });

  it('stops on cancel and analyses the next frame as usual', async () => {
    const p = session.analyzeDemo();
    setTimeout(() => session.cancel(), 300);
    expect(await p).toMatchObject({ ok: false, kind: 'cancelled' });
    const again = await ok(session.analyze({ name: 'sim.fits', bytes: fits }));
    expect(again.report.stars.length).toBeGreaterThan(100);
  });
});

describe('optics remembered per camera', () => {
  it('uses the entered optics, remembers them, and applies them to the next frame of that camera', async () => {
    const first = await ok(session.analyze({ name: 'sim.png', bytes: png }));
    expect(first.opticsMissing.sort()).toEqual(['fNumber', 'focalLengthMm', 'pixelSizeUm']);
    const entered = { focalLengthMm: 200, pixelSizeUm: 4.3, fNumber: 2.8 };
    const second = await ok(session.analyze({ name: 'sim.png', bytes: png }, entered));
    expect(second.opticsFrom).toBe('entered');
    expect(second.opticsMissing).toEqual([]);
    // plate scale 206.265 p / f arcsec per px (optics.md section 7)
    expect(second.report.frame.optics.plateScaleArcsecPerPx).toBeCloseTo((206.265 * 4.3) / 200, 3);
    expect(second.opticsGiven).toEqual({ focalLengthMm: 'typed', pixelSizeUm: 'typed', fNumber: 'typed' });
    expect(second.rememberedOptics).toEqual(entered);
    const third = await ok(session.analyze({ name: 'other-night.png', bytes: png }));
    expect(third.opticsFrom).toBe('remembered');
    expect(third.opticsGiven.focalLengthMm).toBe('remembered');
    // a PNG names no camera: the match was by frame size alone, and the result says so
    expect(third.cameraNamed).toBe(false);
    expect(third.report.frame.optics.focalLengthMm).toBe(200);
    const saved = JSON.parse(readFileSync(path.join(cfgDir, 'cameras.json'), 'utf8'));
    expect(saved.cameras[second.camera]).toEqual(entered);
  });

  it('forgets the optics of a camera on request, on disk too', async () => {
    const before = await ok(session.analyze({ name: 'sim.png', bytes: png }));
    expect(before.opticsFrom).toBe('remembered');
    expect(await session.forgetOptics(before.camera)).toEqual({ ok: true, value: null });
    const saved = JSON.parse(readFileSync(path.join(cfgDir, 'cameras.json'), 'utf8'));
    expect(saved.cameras[before.camera]).toBeUndefined();
    const after = await ok(session.analyze({ name: 'sim.png', bytes: png }));
    expect(after.opticsFrom).toBe('none');
    expect(after.rememberedOptics).toBeNull();
    expect(after.opticsMissing.sort()).toEqual(['fNumber', 'focalLengthMm', 'pixelSizeUm']);
  });
});
