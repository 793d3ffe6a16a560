/**
 * End-to-end (Debian's Chromium via playwright-core, browser mode): the two views of our own
 * (issue 12 item 8), "Sensor tilt" (the sensor seen edge-on) and "Stacked stars", on the demo frame, day and night.
 * Checked on the DOM against the report (the JSON export) and on rendered pixels: each stack's
 * centre is its brightest part, night mode is red on black. Screenshots of both modes go to
 * test-output/screenshots/ (zones-*). The focus pair's settled picture is checked against the
 * simulator's scene (the right side 40 µm behind focus across the width).
 */
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import sharp from 'sharp';
import type { BrowserContext, Page } from 'playwright-core';
import type { Report } from '../../core/report/types.ts';
import { sensorSideData } from '../../core/report/svg/sensor-side.ts';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { launch, shot, startServe, type Served } from './browser.ts';

declare const document: any;

let served: Served;
let ctx: BrowserContext;
let page: Page;
let report: Report;
let dir: string;
const pageErrors: string[] = [];

beforeAll(async () => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-zones-'));
  served = await startServe(path.join(dir, 'config'));
  ({ ctx, page } = await launch());
  page.on('pageerror', (e) => pageErrors.push(e.message));
  await page.goto(served.url);
  await page.waitForSelector('body[data-ready="1"]');
  await page.click('#btn-demo');
  await page.waitForFunction(() => document.body.dataset.analysis && !document.body.classList.contains('busy'), null, { timeout: 90_000 });
  const id = (await page.getAttribute('body', 'data-analysis')) ?? '';
  const res = await fetch(`${served.origin}/api/export?id=${id}&kind=json`, { headers: { 'X-Skyloupe-Token': served.token } });
  report = (await res.json()) as Report;
});

afterAll(async () => {
  await ctx?.close();
  served?.child.kill('SIGTERM');
  if (dir) rmSync(dir, { recursive: true, force: true });
});

/** Pixels with green or blue above 0.3 x red + 10: not red on black (the page-story test's rule). */
async function nonRed(png: Buffer): Promise<number> {
  const { data, info } = await sharp(png).raw().toBuffer({ resolveWithObject: true });
  let n = 0;
  for (let i = 0; i < data.length; i += info.channels) if (data[i + 1] > 0.3 * data[i] + 10 || data[i + 2] > 0.3 * data[i] + 10) n++;
  return n;
}

async function setNight(on: boolean): Promise<void> {
  const is = ((await page.getAttribute('body', 'class')) ?? '').includes('night');
  if (is !== on) await page.keyboard.press('n');
}

describe('Sensor tilt, seen edge-on', () => {
  it('draws both cuts with the report\'s µm at each edge, the drawn offsets at the stated scale', async () => {
    await setNight(false);
    await page.click('#tab-sensor');
    await page.waitForSelector('svg#sensor-side-svg');
    const d = sensorSideData(report)!;
    const edges = await page.$$eval('svg#sensor-side-svg g.edge', (els: any[]) => els.map((e) => {
      const l = e.querySelector('line');
      return { name: e.dataset.name, offset: Number(e.dataset.offset), dx: Number(l.getAttribute('x2')) - Number(l.getAttribute('x1')), words: e.querySelector('text').textContent };
    }));
    const zScale = Number(await page.getAttribute('svg#sensor-side-svg', 'data-z-scale'));
    expect(edges).toHaveLength(4);
    for (const s of d.sections) for (const e of s.ends) {
      const g = edges.find((x: { name: string; offset: number }) => x.name === e.name && Math.abs(x.offset - e.offset) < 1e-3)!;
      expect(g).toBeTruthy();
      expect(g.dx).toBeCloseTo(e.offset * zScale, 1);
      expect(g.words).toContain(e.offset === 0 ? '0 µm' : `${Math.abs(e.offset).toFixed(1)} ± `);
    }
    // the demo's tilt is one the diagnosis calls significant: the figure says what to turn
    const action = await page.$$eval('svg#sensor-side-svg text.tilt-action', (els: any[]) => els.map((e) => e.textContent).join(' '));
    expect(action).toContain(`move the ${d.softer} edge ${d.endToEnd.toFixed(1)}`);
    await shot(page, 'zones-sensor-side-day');
    await setNight(true);
    await page.waitForSelector('svg#sensor-side-svg[data-theme="night"]');
    expect(await nonRed(await page.locator('svg#sensor-side-svg').screenshot())).toBe(0);
    await shot(page, 'zones-sensor-side-night');
    await setNight(false);
  });
});

describe('Stacked stars', () => {
  it('shows the nine zone stacks with the report\'s counts and numbers, brightest at their centres', async () => {
    await page.click('#tab-stacks');
    await page.waitForSelector('svg#zone-psf-svg');
    const zp = report.zonePsf!;
    const groups = await page.$$eval('svg#zone-psf-svg g.zone-psf', (els: any[]) => els.map((e) => ({
      zone: e.dataset.zone, stars: Number(e.dataset.stars), words: Array.from(e.querySelectorAll('text.zone-words')).map((t: any) => t.textContent).join(' '),
      box: (() => { const r = e.querySelector('rect').getBoundingClientRect(); return { x: r.x, y: r.y, w: r.width, h: r.height }; })(),
    })));
    expect(groups).toHaveLength(9);
    const shotPng = await page.screenshot();
    const { data, info } = await sharp(shotPng).raw().toBuffer({ resolveWithObject: true });
    const lum = (x: number, y: number) => { const i = (Math.round(y) * info.width + Math.round(x)) * info.channels; return data[i] + data[i + 1] + data[i + 2]; };
    for (const z of zp.zones) {
      const g = groups.find((q: { zone: string }) => q.zone === z.name)!;
      expect(g.stars).toBe(z.stacked);
      expect(g.words).toContain(`FWHM ${z.fwhmPx!.toFixed(2)}`);
      expect(g.words).toContain(`ellipticity ${z.ellipticity!.toFixed(3)}`);
      // the stack's centre pixel is brighter on screen than a point near its square's corner
      if (g.box.y + g.box.h < info.height) expect(lum(g.box.x + g.box.w / 2, g.box.y + g.box.h / 2)).toBeGreaterThan(lum(g.box.x + 0.1 * g.box.w, g.box.y + 0.1 * g.box.h) + 60);
    }
    await shot(page, 'zones-stacks-day');
  });

  it('lists a zone\'s stars on a click, and a star\'s numbers on a click on its row', async () => {
    await page.click('svg#zone-psf-svg g.zone-psf[data-zone="centre"]');
    await page.waitForSelector('table.zone-members[data-zone="centre"]');
    const centre = report.zonePsf!.zones.find((z) => z.name === 'centre')!;
    const rows = await page.$$eval('table.zone-members tbody tr', (els: any[]) => els.map((e) => Number(e.dataset.star)));
    expect(rows).toEqual(centre.members.slice(0, 200));
    await page.click(`table.zone-members tbody tr[data-star="${rows[0]}"]`);
    await page.waitForSelector('#star-panel h2');
    expect(await page.textContent('#star-panel h2')).toBe(`Star ${rows[0] + 1}`);
    await page.waitForSelector('#stamp svg');
    await shot(page, 'zones-stacks-members-day');
    await setNight(true);
    await page.waitForSelector('svg#zone-psf-svg[data-theme="night"]');
    expect(await nonRed(await page.locator('svg#zone-psf-svg').screenshot())).toBe(0);
    await shot(page, 'zones-stacks-night');
    await setNight(false);
    expect(pageErrors).toEqual([]);
  });
});

/** Scene truth of the pair: the focus error grows by 40 µm from the left edge to the right (right side behind focus). */
const PAIR_TILT_X_UM = 40;
const PAIR_STEP_UM = 40;

describe('Sensor tilt from a focus pair', () => {
  it('names the right edge behind focus and the left in front, as the scene has them', async () => {
    const optics = { pixelSizeUm: 4.5, focalLengthMm: 400, fNumber: 5 };
    const frame = (seed: number, defocus: number) => fitsBytes(renderScene(parseScene({
      schema: 'skyloupe.scene/1', width: 900, height: 600, seed, stars: { count: 450 }, optics,
      psf: { kind: 'optics', seeing: { fwhmPx: 2.4 }, aberrations: { tiltXUmAcross: PAIR_TILT_X_UM, defocusCenterUm: defocus } },
    })));
    const a = path.join(dir, 'zpair-1.fits');
    const b = path.join(dir, 'zpair-2.fits');
    writeFileSync(a, frame(171, 0));
    writeFileSync(b, frame(172, PAIR_STEP_UM));
    await page.click('#tab-focuspair');
    await page.setInputFiles('#pair-first-input', a);
    await page.waitForFunction(() => (document.querySelector('#pair-slot-first .slot-name')?.textContent ?? '').includes('zpair-1'), null, { timeout: 90_000 });
    await page.setInputFiles('#pair-second-input', b);
    await page.waitForFunction(() => (document.querySelector('#pair-slot-second .slot-name')?.textContent ?? '').includes('zpair-2'), null, { timeout: 90_000 });
    await page.fill('#pair-step', String(PAIR_STEP_UM));
    await page.click('#btn-pair-run');
    await page.waitForSelector('#pair-result', { timeout: 60_000 });
    expect(await page.getAttribute('#pair-result', 'data-sign-resolved')).toBe('true');
    await page.waitForSelector('svg#sensor-side-svg[data-sign-resolved="true"]');
    const words = await page.$$eval('svg#sensor-side-svg g.section[data-kind="along"] text.edge-words', (els: any[]) => els.map((e) => e.textContent));
    expect(words.find((w: string) => w.startsWith('right edge'))).toContain('behind focus');
    expect(words.find((w: string) => w.startsWith('left edge'))).toContain('in front of focus');
    // each edge about half the scene's 40 µm from the centre's focus (25 %, as the focus pair's own test allows)
    for (const w of words) expect(Math.abs(Number(/: ([\d.]+)/.exec(w)![1]) - PAIR_TILT_X_UM / 2)).toBeLessThan(0.25 * PAIR_TILT_X_UM);
    expect(await page.locator('svg#sensor-side-svg line.sensor-mirror').count()).toBe(0);
    await page.locator('svg#sensor-side-svg').scrollIntoViewIfNeeded();
    await shot(page, 'zones-sensor-side-focus-pair-day');
  });
});
