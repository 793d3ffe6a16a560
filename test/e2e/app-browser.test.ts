/**
 * End-to-end: Debian's Chromium (playwright-core) against browser mode. Opens the demo frame,
 * waits for the findings, checks that the views show the report's counts and values, switches
 * views, exports, drops bad files, enters missing optics, compares two frames and runs a
 * spacer sweep. Screenshots of every view go to test-output/screenshots/.
 *
 * The comparison values are the report itself (as the JSON export gives it), simple counts
 * recomputed here from its star list, and for the sweep the simulator's scene (the spacer
 * distance where its spacing error is zero).
 */
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import sharp from 'sharp';
import type { BrowserContext, Page } from 'playwright-core';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { encodeFits } from '../../core/frame/fits-write.ts';
import type { Report } from '../../core/report/types.ts';
import { launch, shot, startServe, stopServe, OUT, type Served } from './browser.ts';

// page-side code runs in the browser; these names exist there, not in Node's types
declare const document: any;
declare const DataTransfer: any;
declare const File: any;
declare const getComputedStyle: any;

/** The spacer distance at which the simulated spacing error is zero (scene truth). */
const NOMINAL_SPACER_MM = 55.2;
/**
 * Spacing errors of -8, -3, +2 and +7 mm: the simulator's spacing model is invented and weak
 * (0.25 um/mm^2 per mm), so the steps are large for the corner pattern to flip clearly.
 */
const SPACERS = [47.2, 52.2, 57.2, 62.2];
/** Large pixels (a wide sensor in mm) for the same reason. */
const SWEEP_OPTICS = { pixelSizeUm: 9, focalLengthMm: 400, fNumber: 4 };

let served: Served;
let dir: string | undefined;
let ctx: BrowserContext;
let page: Page;
let report: Report;
const files: Record<string, string> = {};
const pageErrors: string[] = [];

function scene(seed: number, aberrations: Record<string, number>, size: [number, number] = [900, 600], count = 420, optics?: Record<string, number>) {
  return fitsBytes(renderScene(parseScene({
    schema: 'skyloupe.scene/1', width: size[0], height: size[1], seed, stars: { count }, ...(optics ? { optics } : {}),
    psf: { kind: 'optics', seeing: { fwhmPx: 2.6 }, aberrations },
  })));
}

async function analysisId(): Promise<string> {
  return (await page.getAttribute('body', 'data-analysis')) ?? '';
}

/** The report of the current analysis, as the JSON export gives it. */
async function currentReport(): Promise<Report> {
  const id = await analysisId();
  const res = await fetch(`${served.origin}/api/export?id=${id}&kind=json`, { headers: { 'X-Skyloupe-Token': served.token } });
  return (await res.json()) as Report;
}

async function waitAnalysis(previous: string | null): Promise<void> {
  await page.waitForFunction((prev) => {
    const b = document.body;
    return b.dataset.analysis && b.dataset.analysis !== prev && !b.classList.contains('busy');
  }, previous, { timeout: 90_000 });
}

async function download(selector: string): Promise<string> {
  const [dl] = await Promise.all([page.waitForEvent('download'), page.click(selector)]);
  const p = path.join(OUT, dl.suggestedFilename());
  await dl.saveAs(p);
  return p;
}

async function dropFile(name: string, bytes: Uint8Array): Promise<void> {
  const dt = await page.evaluateHandle(({ name, b64 }) => {
    const bin = atob(b64);
    const u = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) u[i] = bin.charCodeAt(i);
    const d = new DataTransfer();
    d.items.add(new File([u], name));
    return d;
  }, { name, b64: Buffer.from(bytes).toString('base64') });
  await page.dispatchEvent('#view', 'drop', { dataTransfer: dt });
}

beforeAll(async () => {
  const work = (dir = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-e2e-')));
  const put = (name: string, bytes: Uint8Array) => { files[name] = path.join(work, name); writeFileSync(files[name], bytes); };
  put('lens-a.fits', scene(20, {}));
  put('lens-b.fits', scene(21, { tiltXUmAcross: 90, astigmatismUmPerMm2: 1.5 }));
  for (const s of SPACERS) put(`spacer-${s.toFixed(1)}mm.fits`, scene(Math.round(30 + s * 10), { spacingErrorMm: +(s - NOMINAL_SPACER_MM).toFixed(3) }, [900, 630], 420, SWEEP_OPTICS));
  put('broken.fits', new TextEncoder().encode('SIMPLE  =                    T / a header and nothing else'));
  put('empty-sky.fits', encodeFits({ width: 300, height: 200, data: new Float32Array(300 * 200).fill(1200), bitpix: -32 }));
  // a PNG carries no optics: the form must ask for them
  const raw = scene(44, {}, [640, 420], 200);
  const { decodeFrame } = await import('../../core/frame/read.ts');
  const f = await decodeFrame(raw, 'x.fits');
  // 16-bit, so the sky noise keeps its spread (8 bits would quantise it away)
  const u16 = Uint16Array.from(f.data, (v) => Math.min(65535, Math.round(v)));
  put('no-optics.png', await sharp(u16, { raw: { width: f.width, height: f.height, channels: 1 } }).toColourspace('grey16').png().toBuffer());
  served = await startServe(path.join(work, 'config'));
  ({ ctx, page } = await launch());
  page.on('pageerror', (e) => pageErrors.push(e.message));
});

afterAll(async () => {
  await ctx?.close();
  await stopServe(served);
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe('the demo frame in the browser', () => {
  it('opens the demo frame, stays responsive while it works, and shows the findings', async () => {
    await page.goto(served.url);
    await page.waitForSelector('body[data-ready="1"]');
    await shot(page, '00-start');
    await page.click('#btn-demo');
    await page.waitForSelector('#progress:not([hidden])');
    // the page answers while the worker analyses: switching views works before the result is in
    await page.click('#tab-shape');
    expect(await page.getAttribute('#tab-shape', 'aria-selected')).toBe('true');
    expect(await page.isVisible('#progress')).toBe(true);
    await page.click('#tab-sky');
    await waitAnalysis(null);
    report = await currentReport();
    expect(report.schema).toBe('skyloupe.report/1');
    expect(await page.textContent('#summary [data-k="stars"]')).toBe(String(report.summary.stars));
    expect(await page.textContent('#summary [data-k="measured"]')).toBe(String(report.detection.measured));
    const findings = report.findings ?? [];
    expect(findings.length).toBeGreaterThan(0);
    expect(Number(await page.getAttribute('.findings-count', 'data-count'))).toBe(findings.length);
  });

  it('shows every finding with its message', async () => {
    await page.click('#tab-findings');
    const codes = await page.$$eval('li.finding', (els: any[]) => els.map((e) => e.dataset.code));
    expect(codes.sort()).toEqual((report.findings ?? []).map((f) => f.code).sort());
    // the demo is placed on the sky: the lens's distortion is a finding on the page as in the CLI
    expect(codes).toContain('DISTORTION');
    const texts = await page.$$eval('li.finding', (els: any[]) => Object.fromEntries(els.map((e) => [e.dataset.code, e.querySelector('.finding-message').textContent])));
    // the page words each message its own way (its controls, µm, ±, °) but keeps every number
    const numbers = (s: string) => (s.match(/-?\d+(?:\.\d+)?/g) ?? []).join(' ');
    for (const f of report.findings ?? []) expect(numbers(texts[f.code])).toBe(numbers(f.message));
    await shot(page, '06-findings');
  });

  it('marks the stars in the sky and gives a clicked star its numbers and stamp', async () => {
    await page.click('#tab-sky');
    await page.waitForSelector('svg#sky-svg');
    const clean = report.stars.filter((s) => s.flags.length === 0).length;
    expect(Number(await page.getAttribute('svg#sky-svg', 'data-clean-marked'))).toBe(Math.min(clean, 4000));
    await shot(page, '01-sky');
    // the brightest clean star: click its marker
    const i = report.stars.map((s, k) => [s, k] as const).filter(([s]) => s.flags.length === 0).sort((a, b) => b[0].snr - a[0].snr)[0][1];
    await page.click(`svg#sky-svg circle[data-star="${i}"]`, { force: true });
    await page.waitForSelector('#stamp svg');
    const pos = await page.textContent('#star-panel .star-table tr:first-child td');
    expect(pos).toBe(`${report.stars[i].x.toFixed(1)}, ${report.stars[i].y.toFixed(1)} px`);
    expect(await page.textContent('#star-panel')).toContain(report.stars[i].fwhmPx.toFixed(2));
    // keyboard zoom keeps working on the sky
    await page.focus('#view');
    await page.keyboard.press('+');
    expect(await page.getAttribute('svg#sky-svg g.zoom-layer', 'transform')).toMatch(/scale\(2\)/);
    await shot(page, '01-sky-star');
    await page.keyboard.press('0');
  });

  it('draws the shape map per zone from the field map', async () => {
    await page.keyboard.press('2');
    await page.waitForSelector('svg#shape-svg');
    const field = report.field as { grid: { cells: { n: number; eMag: number | null; thetaDeg: number | null }[] } };
    const zones = field.grid.cells.filter((c) => c.n > 0 && c.eMag !== null && c.thetaDeg !== null).length;
    expect(Number(await page.getAttribute('svg#shape-svg', 'data-vectors'))).toBe(zones);
    expect(await page.textContent('svg#shape-svg')).toContain('a/b');
    await shot(page, '02-shape-map');
    await page.click('#shape-mode-stars');
    const stars = report.stars.filter((s) => s.flags.length === 0).length;
    expect(Number(await page.getAttribute('svg#shape-svg', 'data-vectors'))).toBe(Math.min(stars, 3000));
    await shot(page, '02-shape-map-stars');
  });

  it('draws size maps in px, arcsec and ellipticity with contours', async () => {
    await page.keyboard.press('3');
    await page.waitForSelector('svg#size-fwhmPx');
    const lo = Number(await page.getAttribute('svg#size-fwhmPx', 'data-min'));
    const hi = Number(await page.getAttribute('svg#size-fwhmPx', 'data-max'));
    // the smooth map spans the typical star sizes: the median FWHM lies inside its range
    expect(lo).toBeLessThan(report.summary.medianFwhmPx!);
    expect(hi).toBeGreaterThan(report.summary.medianFwhmPx!);
    expect(await page.locator('svg#size-fwhmPx .contours path').count()).toBeGreaterThan(0);
    await shot(page, '03-size-fwhm-px');
    await page.click('#size-q-fwhmArcsec');
    const plate = report.frame.optics.plateScaleArcsecPerPx!;
    expect(Number(await page.getAttribute('svg#size-fwhmArcsec', 'data-min'))).toBeCloseTo(lo * plate, 6);
    await shot(page, '03-size-fwhm-arcsec');
    await page.click('#size-q-ellipticity');
    await page.waitForSelector('svg#size-ellipticity');
    await shot(page, '03-size-ellipticity');
  });

  it('draws the sensor edge-on, cut along the diagnosis\'s tilt axis', async () => {
    await page.keyboard.press('4');
    await page.waitForSelector('svg#sensor-side-svg');
    const tilt = (report.diagnosis as { tilt: { axisDeg: number; signResolved: boolean } }).tilt;
    expect(await page.locator('svg#sensor-side-svg g.section').count()).toBe(2);
    // the cut's title names the report's axis, an axis (mod 180) written in (-90, 90]
    const a = ((tilt.axisDeg % 180) + 180) % 180;
    const title = await page.textContent('svg#sensor-side-svg g.section[data-kind="along"] > text');
    expect(title).toContain(`(${Math.round(a > 90 ? a - 180 : a)}°`);
    expect(await page.getAttribute('svg#sensor-side-svg', 'data-sign-resolved')).toBe(String(tilt.signResolved));
    expect(await page.locator('svg#sensor-side-svg g.edge').count()).toBe(4);
    await shot(page, '04-sensor-edge-on');
  });

  it('shows the stacked stars of each zone with the report\'s counts', async () => {
    await page.keyboard.press('5');
    await page.waitForSelector('svg#zone-psf-svg');
    const zp = report.zonePsf!;
    expect(await page.locator('svg#zone-psf-svg g.zone-psf').count()).toBe(zp.zones.length);
    for (const z of zp.zones) expect(Number(await page.getAttribute(`svg#zone-psf-svg g.zone-psf[data-zone="${z.name}"]`, 'data-stars'))).toBe(z.stacked);
    await shot(page, '05-stacked-stars');
  });

  it('switches to red night mode and back', async () => {
    await page.keyboard.press('1');
    await page.keyboard.press('n');
    expect(await page.getAttribute('body', 'class')).toContain('night');
    expect(await page.getAttribute('svg#sky-svg', 'data-theme')).toBe('night');
    await shot(page, '07-night-sky');
    await page.keyboard.press('4');
    await shot(page, '07-night-sensor-edge-on');
    await page.keyboard.press('n');
    expect(await page.getAttribute('svg#sensor-side-svg', 'data-theme')).toBe('day');
  });
});

describe('exports', () => {
  it('saves a self-contained HTML report with the same figures and findings', async () => {
    const p = await download('#btn-export-html');
    const html = readFileSync(p, 'utf8');
    expect(path.basename(p)).toBe('demo-frame.skyloupe.html');
    // seven figures, and the distortion figure when the frame is placed on the sky (the demo is)
    expect(report.astrometry?.solved).toBe(true);
    expect((html.match(/<svg /g) ?? []).length).toBe(8);
    expect(html).toContain('as the lens draws it');
    const embedded = JSON.parse(html.match(/<script type="application\/json" id="skyloupe-report">([\s\S]*?)<\/script>/)![1]) as Report;
    expect(embedded.summary).toEqual(report.summary);
    for (const f of report.findings ?? []) expect(html).toContain(f.code);
    expect(html).not.toMatch(/(?:src|href)="https?:/);
    const view = await ctx.newPage();
    await view.goto(`file://${p}`);
    await view.screenshot({ path: path.resolve('test-output/screenshots/08-html-report.png') });
    await view.close();
  });

  it('saves the JSON report and the CSV star table', async () => {
    const j = JSON.parse(readFileSync(await download('#btn-export-json'), 'utf8')) as Report;
    expect(j.summary).toEqual(report.summary);
    const csv = readFileSync(await download('#btn-export-csv'), 'utf8');
    // RFC 4180: a header record and one record per star, CRLF-terminated
    expect(csv.split('\r\n').filter(Boolean)).toHaveLength(report.stars.length + 1);
  });

  it('saves a PNG of the view', async () => {
    await page.keyboard.press('3');
    const p = await download('#btn-export-png');
    const b = readFileSync(p);
    // PNG signature and IHDR width/height (RFC 2083 sections 12.11 and 4.1.1)
    expect([...b.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
    expect(b.readUInt32BE(16)).toBeGreaterThan(400);
    expect(b.readUInt32BE(20)).toBeGreaterThan(200);
  });
});

describe('clear messages', () => {
  it('says a dropped file cannot be read, and keeps the current frame', async () => {
    const before = await analysisId();
    await page.keyboard.press('1');
    await dropFile('broken.fits', readFileSync(files['broken.fits']));
    await page.waitForFunction(() => (document.querySelector('#message')?.textContent ?? '').includes('cannot be read'));
    expect(await page.textContent('#message')).toContain('This file cannot be read');
    expect(await page.textContent('#message')).toContain('broken.fits');
    expect(await analysisId()).toBe(before);
    await shot(page, '09-bad-file');
  });

  it('says when a frame has no stars', async () => {
    await dropFile('empty-sky.fits', readFileSync(files['empty-sky.fits']));
    await page.waitForFunction(() => (document.querySelector('#message')?.textContent ?? '').includes('No stars'));
  });

  it('asks for missing optics and uses them', async () => {
    const before = await analysisId();
    await page.setInputFiles('#file-input', files['no-optics.png']);
    await waitAnalysis(before);
    await page.waitForSelector('#optics-form:not([hidden])');
    expect(await page.textContent('#optics-why')).toContain('focal length');
    await shot(page, '10-optics-form');
    await page.fill('#in-focal', '300');
    await page.fill('#in-pixel', '3.76');
    await page.fill('#in-fnum', '4');
    const id = await analysisId();
    await page.click('#btn-optics');
    await waitAnalysis(id);
    expect(await page.isHidden('#optics-form')).toBe(true);
    const r = await currentReport();
    // plate scale 206.265 p / f (optics.md section 7): 3.76 um at 300 mm = 2.585 "/px
    expect(r.frame.optics.plateScaleArcsecPerPx).toBeCloseTo((206.265 * 3.76) / 300, 3);
    expect(r.frame.optics.source.focalLengthMm).toBe('user');
  });

  it('stops an analysis on request', async () => {
    await page.click('#btn-demo');
    await page.waitForSelector('#progress:not([hidden])');
    await page.click('#btn-cancel');
    await page.waitForFunction(() => (document.querySelector('#message')?.textContent ?? '').includes('Analysis stopped'), null, { timeout: 30_000 });
  });
});

describe('several frames', () => {
  it('compares two frames zone by zone on the same scale', async () => {
    await page.click('#btn-demo');
    await waitAnalysis(await analysisId());
    await page.keyboard.press('7');
    await page.click('#btn-compare-a-current');
    // the demo frame (2400 x 1600 px) and lens B (900 x 600 px) cannot be two settings of one camera
    await page.setInputFiles('#compare-b-input', files['lens-b.fits']);
    await page.waitForFunction(() => (document.querySelector('#message')?.textContent ?? '').includes('differ in size'), null, { timeout: 60_000 });
    expect(await page.textContent('#message')).toMatch(/compare: the frames differ in size \(.*2400 x 1600 px, .*900 x 600 px\)/);
    await page.setInputFiles('#compare-a-input', files['lens-a.fits']);
    await page.waitForSelector('.compare-table tbody tr', { timeout: 60_000 });
    const rows = await page.$$eval('.compare-table tbody tr', (els: any[]) => els.map((e) => ({ zone: e.dataset.zone, better: e.dataset.better })));
    expect(rows.map((r: { zone: string }) => r.zone)).toEqual(expect.arrayContaining(['center', 'corners']));
    for (const r of rows) expect(['A', 'B', 'tie']).toContain(r.better);
    // one colour range for both maps
    const [a, b] = await page.$$eval('.pair svg', (els: any[]) => els.map((e) => e.querySelector('text.heat-range')?.textContent));
    expect(a).toBeTruthy();
    expect(b).toBeTruthy();
    await shot(page, '11-compare');
  });

  it('finds the best spacer distance from a sweep', async () => {
    await page.keyboard.press('8');
    await page.setInputFiles('#sweep-input', SPACERS.map((s) => files[`spacer-${s.toFixed(1)}mm.fits`]));
    await page.waitForFunction((n) => document.querySelectorAll('.sweep-rows tbody tr').length === n, SPACERS.length, { timeout: 90_000 });
    // distances come from the file names
    const mm = await page.$$eval('.sweep-mm', (els: any[]) => els.map((e) => Number(e.value)));
    expect(mm).toEqual(SPACERS);
    await page.click('#btn-sweep-fit');
    await page.waitForSelector('#sweep-best');
    const text = (await page.textContent('#sweep-best')) ?? '';
    const m = /Best spacer distance: ([\d.]+) mm(?: ± ([\d.]+) mm)?/.exec(text);
    expect(m, text).not.toBeNull();
    const best = Number(m![1]);
    const unc = m![2] ? Number(m![2]) : 0;
    // the simulator's spacing error is zero at NOMINAL_SPACER_MM (scene truth); the sweep spans 15 mm
    expect(Math.abs(best - NOMINAL_SPACER_MM)).toBeLessThan(Math.max(3 * unc, 0.5));
    expect(Number(await page.getAttribute('svg#sweep-svg', 'data-points'))).toBe(SPACERS.length);
    await shot(page, '12-spacer-sweep');
  });
});

describe('the page itself', () => {
  it('is readable at 1366 x 768 and on a 4K screen', async () => {
    await page.keyboard.press('3');
    const at = async (w: number, h: number) => {
      await page.setViewportSize({ width: w, height: h });
      await page.waitForTimeout(400); // the views redraw after a resize
      return page.evaluate(() => ({
        font: parseFloat(getComputedStyle(document.documentElement).fontSize),
        overflowX: document.documentElement.scrollWidth > document.documentElement.clientWidth,
        figure: document.querySelector('#view svg')?.getBoundingClientRect().width ?? 0,
      }));
    };
    const small = await at(1366, 768);
    expect(small.overflowX).toBe(false);
    expect(small.font).toBeGreaterThanOrEqual(14);
    const big = await at(3840, 2160);
    await shot(page, '13-size-map-4k');
    expect(big.overflowX).toBe(false);
    // text grows with the screen (about 24 px on 4K) and the figure fills the wider view
    expect(big.font).toBeGreaterThan(small.font * 1.5);
    expect(big.figure).toBeGreaterThan(small.figure * 2);
    await page.setViewportSize({ width: 1366, height: 768 });
  });

  it('raised no script errors', () => {
    expect(pageErrors).toEqual([]);
  });
});
