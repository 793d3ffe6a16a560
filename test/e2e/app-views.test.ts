/**
 * End-to-end, browser mode in Debian's Chromium: the views for the plate solution and the focus
 * series. A real frame (tetra3, ../shared/data/real, ESA/Gustav Pettersson, CC BY-SA 3.0 IGO)
 * that the engine places on the sky: the Distortion view states what the report says, the Sky
 * view labels its catalogue stars and marks its saturated stars. A rendered frame of random dots
 * (not the sky): "not placed on the sky" and why. A rendered frame with a fisheye's image disc
 * drawn here: the Sky view outlines that circle (truth: the circle drawn). A rendered focus series
 * with FOCUSPOS cards (truth: the positions and the scene's 20 µm tilt): dropped on the Through
 * focus view, positions read from the headers, the result equal to `skyloupe through-focus`'s.
 * Screenshots, day and night, go to test-output/screenshots/ and, for review, /work/wt/shots/views
 * when that folder exists.
 */
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { copyFileSync, existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { BrowserContext, Page } from 'playwright-core';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import type { Report } from '../../core/report/types.ts';
import { launch, shot, startServe, SHOTS, type Served } from './browser.ts';
import { frameScene, type SeriesScene } from '../reference/recovery-focus-series.ts';
import { mulberry32, normal } from '../helpers/rng.ts';
import { pageMessage } from '../../app/renderer/finding-words.ts';

declare const document: any;
declare const DataTransfer: any;
declare const File: any;

const REAL = '/work/shared/data/real/tetra3_2019-07-29T204726_Alt60_Azi135_Try1.fits';
const REVIEW = '/work/wt/shots/views';
const hasReal = existsSync(REAL);

let served: Served;
let ctx: BrowserContext;
let page: Page;
let dir: string;
const pageErrors: string[] = [];

/** The page writes negative numbers with a true minus sign (U+2212). */
const minus = (s: string) => s.replace('-', '−');

/** Screenshot for the test output, and a copy for review. */
async function snap(name: string): Promise<void> {
  await shot(page, name);
  if (existsSync(REVIEW)) copyFileSync(path.join(SHOTS, `${name}.png`), path.join(REVIEW, `${name}.png`));
}

async function night(on: boolean): Promise<void> {
  const is = ((await page.getAttribute('body', 'class')) ?? '').includes('night');
  if (is !== on) { await page.focus('#view'); await page.keyboard.press('n'); }
}

async function dropFiles(files: { name: string; bytes: Uint8Array }[]): Promise<void> {
  const dt = await page.evaluateHandle((list: { name: string; b64: string }[]) => {
    const d = new DataTransfer();
    for (const { name, b64 } of list) {
      const bin = atob(b64);
      const u = new Uint8Array(bin.length);
      for (let i = 0; i < bin.length; i++) u[i] = bin.charCodeAt(i);
      d.items.add(new File([u], name));
    }
    return d;
  }, files.map((f) => ({ name: f.name, b64: Buffer.from(f.bytes).toString('base64') })));
  await page.dispatchEvent('#view', 'drop', { dataTransfer: dt });
}

async function openFrame(name: string, bytes: Uint8Array): Promise<Report> {
  const prev = (await page.getAttribute('body', 'data-analysis')) ?? '';
  await page.click('#tab-sky');
  await dropFiles([{ name, bytes }]);
  await page.waitForFunction((p: string) => {
    const b = document.body;
    return b.dataset.analysis && b.dataset.analysis !== p && !b.classList.contains('busy');
  }, prev, { timeout: 120_000 });
  const id = await page.getAttribute('body', 'data-analysis');
  const res = await fetch(`${served.origin}/api/export?id=${id}&kind=json`, { headers: { 'X-Skyloupe-Token': served.token } });
  return (await res.json()) as Report;
}

// the image disc drawn into a rendered frame: centre and radius in frame pixels (storage rows)
const DISC = { w: 900, h: 600, cx: 451.3, cy: 299.5, r: 0.46 * 900 };

function discFrame(): Uint8Array {
  const res = renderScene(parseScene({
    schema: 'skyloupe.scene/1', width: DISC.w, height: DISC.h, seed: 77, stars: { count: 700 },
    psf: { kind: 'optics', seeing: { fwhmPx: 2.6 }, aberrations: {} },
  }));
  const sorted = Float32Array.from(res.data).sort();
  const sky = sorted[Math.floor(sorted.length / 2)];
  const rnd = normal(mulberry32(3));
  // outside the disc: a black level half the sky's with read noise, as a fisheye's dark corners
  for (let y = 0; y < DISC.h; y++) for (let x = 0; x < DISC.w; x++) {
    if ((x - DISC.cx) ** 2 + (y - DISC.cy) ** 2 > DISC.r ** 2) res.data[y * DISC.w + x] = Math.round(0.5 * sky + 3 * rnd());
  }
  return fitsBytes(res);
}

const tfScene: SeriesScene = { seed: 61, focusUm: 5, width: 640, height: 420, stars: 150, aberrations: { tiltXUmAcross: 20 } };
const positions = [-55, -25, 5, 35, 65];
const STEP = 2.5;
const series = new Map<number, Uint8Array>();

beforeAll(async () => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-e2e-views-'));
  const first = renderScene(frameScene(tfScene, positions[0], 0) as Parameters<typeof renderScene>[0]);
  const field = first.truth.stars.map((t) => ({ x: t.xNominal, y: t.yNominal, fluxE: t.fluxE }));
  positions.forEach((p, k) => {
    const sc = frameScene(tfScene, p, k) as Record<string, unknown>;
    sc.stars = field.map((f) => ({ x: f.x + 0.7 * k, y: f.y - 0.4 * k, fluxE: f.fluxE }));
    const res = renderScene(sc as unknown as Parameters<typeof renderScene>[0]);
    res.cards.push({ key: 'FOCUSPOS', value: p / STEP, comment: 'focuser position, steps' });
    series.set(p, fitsBytes(res));
    writeFileSync(path.join(dir, `tf${p}.fits`), series.get(p)!);
  });
  served = await startServe(path.join(dir, 'config'));
  ({ ctx, page } = await launch());
  page.on('pageerror', (e) => pageErrors.push(e.message));
  await page.goto(served.url);
  await page.waitForSelector('body[data-ready="1"]');
}, 180_000);

afterAll(async () => {
  await ctx?.close();
  served?.child.kill('SIGTERM');
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe('a real frame placed on the sky', () => {
  // never skipped silently (README): without the package this fails and says what to install
  beforeAll(() => { if (!hasReal) throw new Error('the real frames in ../shared/data/real are missing'); });
  let report: Report;
  beforeAll(async () => {
    report = await openFrame(path.basename(REAL), readFileSync(REAL));
  }, 180_000);

  it('the Distortion view states the report\'s pattern, corner percent, focal length and the drawing\'s factor', async () => {
    const a = report.astrometry!;
    expect(a.solved).toBe(true);
    await page.focus('#view');
    await page.keyboard.press('g');
    await page.waitForSelector('#distortion-status[data-solved="true"]');
    const words = (await page.textContent('#distortion-status')) ?? '';
    expect(await page.getAttribute('#distortion-status', 'data-pattern')).toBe(a.distortion!.pattern);
    // signed as the command line prints it; the page writes a true minus sign
    const d = a.distortion!;
    expect(words).toContain(`${d.cornerPercent > 0 ? '+' : ''}${minus(d.cornerPercent.toFixed(2))} ± ${d.cornerPercentErr!.toFixed(2)} % at the corners`);
    expect(words).toContain(`Focal length measured from the stars: ${a.focalLengthMm!.toFixed(2)} ± ${a.focalLengthErrMm!.toPrecision(2)} mm`);
    expect(words).toMatch(/rectilinear|fisheye/);
    // the factor the words state is the one the figure draws with, and every matched star has its arrow
    const factor = await page.getAttribute('#distortion-factor', 'data-exaggeration');
    expect(await page.textContent('#distortion-factor')).toContain(`${factor}× larger`);
    expect(await page.getAttribute('.distortion-figure svg', 'data-exaggeration')).toBe(factor);
    expect(Number(await page.getAttribute('.distortion-figure svg', 'data-arrows'))).toBe(Math.min(600, a.matches.length));
    expect(await page.locator('.distortion-figure .grid-lens path').count()).toBeGreaterThan(10);
    expect(await page.textContent('.astrometry-table')).toContain('Hipparcos');
    expect(await page.textContent('.distortion-meaning')).not.toMatch(/\+-|\bum\b/);
    await snap('views-distortion-day');
    await night(true);
    expect(await page.getAttribute('.distortion-figure svg', 'data-theme')).toBe('night');
    await snap('views-distortion-night');
    await night(false);
  });

  it('the Sky view labels the catalogue stars on request and marks the saturated ones with their own legend entry', async () => {
    const a = report.astrometry!;
    await page.click('#tab-sky');
    await page.waitForSelector('svg#sky-svg');
    expect(await page.getAttribute('svg#sky-svg', 'data-labels')).toBe('0');
    await page.click('#btn-sky-labels');
    await page.waitForSelector('svg#sky-svg .catalogue-label');
    expect(await page.getAttribute('#btn-sky-labels', 'aria-pressed')).toBe('true');
    expect(Number(await page.getAttribute('svg#sky-svg', 'data-labels'))).toBe(Math.min(300, a.matches.length));
    // the brightest matched star carries its catalogue number, next to its own marker
    const brightest = [...a.matches].sort((p, q) => (p.magnitude ?? 99) - (q.magnitude ?? 99))[0];
    const label = page.locator(`svg#sky-svg text.catalogue-label[data-star="${brightest.star}"]`);
    expect(await label.textContent()).toContain(brightest.catalogueId);
    const saturated = report.stars.filter((s) => s.flags.includes('saturated')).length;
    expect(Number(await page.getAttribute('svg#sky-svg', 'data-saturated-marked'))).toBe(saturated);
    if (saturated) expect(await page.textContent('svg#sky-svg g.key-entry[data-mark="saturated"]')).toBe(`saturated (${saturated})`);
    expect(await page.locator('svg#sky-svg g.key-entry[data-mark="label"]').count()).toBe(1);
    await snap('views-sky-labels-day');
    await night(true);
    await snap('views-sky-labels-night');
    await night(false);
    // L toggles them off again
    await page.focus('#view');
    await page.keyboard.press('l');
    expect(await page.getAttribute('svg#sky-svg', 'data-labels')).toBe('0');
  });
});

describe('frames the engine cannot place, and an image circle', () => {
  it('a frame of random dots: "not placed on the sky" with the reason, no labels to offer', async () => {
    const bytes = fitsBytes(renderScene(parseScene({
      schema: 'skyloupe.scene/1', width: 640, height: 420, seed: 9, stars: { count: 220 },
      psf: { kind: 'optics', seeing: { fwhmPx: 2.6 }, aberrations: {} },
    })));
    const report = await openFrame('random-dots.fits', bytes);
    expect(report.astrometry?.solved).toBe(false);
    await page.focus('#view');
    await page.keyboard.press('g');
    await page.waitForSelector('#distortion-status[data-solved="false"]');
    expect(await page.textContent('#distortion-status')).toBe(`Not placed on the sky: ${report.astrometry!.reason}.`);
    expect(await page.locator('.distortion-figure').count()).toBe(0);
    await snap('views-distortion-unsolved');
    await page.click('#tab-sky');
    expect(await page.isDisabled('#btn-sky-labels')).toBe(true);
  });

  it('a fisheye\'s image disc: the Sky view outlines the circle drawn into the frame', async () => {
    const report = await openFrame('disc.fits', discFrame());
    expect(report.frame.dataRegion.kind).toBe('circle');
    await page.waitForSelector('svg#sky-svg circle.data-region');
    const c = page.locator('svg#sky-svg circle.data-region');
    // figure units are frame pixels (pixel centres at +0.5); cy is the centre row, the same either way up
    expect(Math.abs(Number(await c.getAttribute('cx')) - (DISC.cx + 0.5))).toBeLessThan(0.01 * DISC.r);
    expect(Math.abs(Number(await c.getAttribute('cy')) - (DISC.cy + 0.5))).toBeLessThan(0.01 * DISC.r);
    expect(Math.abs(Number(await c.getAttribute('r')) / DISC.r - 1)).toBeLessThan(0.01);
    expect(await page.locator('svg#sky-svg g.key-entry[data-mark="region-circle"]').count()).toBe(1);
    await snap('views-sky-disc-day');
    await night(true);
    await snap('views-sky-disc-night');
    await night(false);
  });
});

describe('the Through focus view', () => {
  const files = (ps: number[]) => ps.map((p) => ({ name: `tf${p}.fits`, bytes: series.get(p)! }));

  it('refuses two frames (use the focus pair) and frames all at one position', async () => {
    await page.focus('#view');
    await page.keyboard.press('t');
    await page.waitForSelector('#btn-series-add');
    await dropFiles(files([5, 35]));
    await page.waitForSelector('#series-rows tbody tr[data-row="1"]');
    // two frames: the page says to use the focus pair (or add a third)
    await page.click('#btn-series-run');
    await page.waitForSelector('#series-error');
    expect(await page.textContent('#series-error')).toMatch(/two frames cannot show a focus curve: for two frames a known step apart use the focus pair/);
    await snap('views-through-focus-two-frames');
    await page.click('#btn-series-focuspair');
    expect(await page.getAttribute('#tab-focuspair', 'aria-selected')).toBe('true');
    await page.click('#tab-through-focus');
    await page.click('#btn-series-clear');
    await dropFiles(files([-25, 5, 35]));
    await page.waitForSelector('#series-rows tbody tr[data-row="2"]');
    for (let k = 0; k < 3; k++) await page.fill(`input.series-pos[data-row="${k}"]`, '10').then(() => page.press(`input.series-pos[data-row="${k}"]`, 'Tab'));
    await page.click('#series-unit-um');
    await page.click('#btn-series-run');
    await page.waitForSelector('#series-error');
    expect(await page.textContent('#series-error')).toMatch(/same position/);
    await page.click('#btn-series-clear');
  });

  it('reads the positions from FOCUSPOS, runs the series and shows what the command line gives', async () => {
    await dropFiles(files(positions));
    await page.waitForSelector(`#series-rows tbody tr[data-row="${positions.length - 1}"]`);
    const typed = await page.$$eval('input.series-pos', (els: any[]) => els.map((e) => Number(e.value)));
    expect(typed).toEqual(positions.map((p) => p / STEP));
    expect(await page.isChecked('#series-unit-steps')).toBe(true);
    expect(await page.textContent('#series-rows tbody tr[data-row="0"] .series-from')).toBe('header FOCUSPOS');
    // steps without a step size: said before anything runs
    await page.click('#btn-series-run');
    await page.waitForSelector('#series-error');
    expect(await page.textContent('#series-error')).toMatch(/one focuser step in µm/);
    await page.fill('#series-step', String(STEP));
    await page.press('#series-step', 'Tab');
    await page.click('#btn-series-run');
    await page.waitForSelector('#series-summary', { timeout: 180_000 });
    const cli = spawnSync(process.execPath, ['bin/skyloupe.mjs', 'through-focus', ...positions.flatMap((p) => ['--at', `${p / STEP}=${path.join(dir, `tf${p}.fits`)}`]), '--step-unit', String(STEP), '--json', '-'], { encoding: 'utf8', timeout: 180_000 });
    expect(cli.status, cli.stderr).toBe(0);
    const r = JSON.parse(cli.stdout);
    const summary = (await page.textContent('#series-summary')) ?? '';
    expect(summary).toContain(`${minus(r.tilt.acrossFrameUm.x.toFixed(1))} ± ${r.tilt.acrossFrameErrUm.x.toFixed(1)} µm`);
    expect(summary).toContain(`${minus(r.bestFocusUm.toFixed(1))} ± ${r.bestFocusErrUm.toFixed(1)} µm`);
    // simulator truth: 20 µm of tilt across the width (the sign is the core's convention, tested there)
    expect(Math.abs(Math.abs(r.tilt.acrossFrameUm.x) - 20)).toBeLessThan(3 * r.tilt.acrossFrameErrUm.x + 3);
    const messages = await page.$$eval('#series-findings .finding-message', (els: any[]) => els.map((e) => e.textContent));
    // the same findings, as the page says them (renderer/finding-words.ts: µm, ±, the page's controls)
    const people = pageMessage;
    expect(messages.sort()).toEqual(r.findings.map((f: { message: string }) => people(f.message)).sort());
    for (const m of messages) expect(m).not.toMatch(/\bum\b|\+-/);
    expect(await page.locator('svg#tf-curves').count()).toBe(1);
    expect(await page.locator('svg#tf-surface').count()).toBe(r.surface ? 1 : 0);
    expect(await page.locator('.series-stamps svg').count()).toBe(r.stamps.length);
    expect(await page.textContent('#series-frames')).toContain('FOCUSPOS');
    await snap('views-through-focus-day');
    for (const [sel, name] of [['svg#tf-curves', 'curves'], ['svg#tf-surface', 'surface'], ['.series-stamps', 'stamps']]) {
      if (await page.locator(sel).count()) { await page.locator(sel).first().scrollIntoViewIfNeeded(); await snap(`views-through-focus-${name}-day`); }
    }
    await page.click('#series-metric-fwhm');
    await page.waitForSelector('svg#tf-curves');
    expect(await page.textContent('svg#tf-curves')).toContain('FWHM');
    await night(true);
    expect(await page.getAttribute('svg#tf-curves', 'data-theme')).toBe('night');
    await snap('views-through-focus-night');
    await night(false);
  }, 240_000);

  it('raised no error in the page', () => {
    expect(pageErrors).toEqual([]);
  });
});
