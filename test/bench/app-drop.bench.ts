/**
 * Desktop page, browser mode: time from dropping a 24-megapixel frame to the first findings
 * on screen, and how long the page's main thread was ever blocked meanwhile (the worker does
 * the work). Prints figures, asserts nothing:
 *   node bin/run-ts.mjs test/bench/app-drop.bench.ts
 * Needs Debian's chromium (/usr/bin/chromium).
 */
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { launch, startServe } from '../e2e/browser.ts';

declare const document: any;
declare const window: any;

const dir = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-drop-bench-'));
const W = 6000;
const H = 4000;
let t = performance.now();
const frame = fitsBytes(renderScene(parseScene({
  schema: 'skyloupe.scene/1', width: W, height: H, seed: 7,
  stars: { count: 4000, fluxMinE: 5000, fluxMaxE: 1e6, minSeparationPx: 12 },
  psf: { kind: 'analytic', model: 'moffat', beta: 3, fwhmMajorPx: 3, fwhmMinorPx: 2.8, vary: { thetaDeg: [-90, 90] } },
})));
const file = path.join(dir, 'big-24mp.fits');
writeFileSync(file, frame);
process.stdout.write(`frame ${W} x ${H} (${((W * H) / 1e6).toFixed(1)} MP, ${(frame.length / 1e6).toFixed(0)} MB FITS) made in ${((performance.now() - t) / 1000).toFixed(1)} s\n`);

const served = await startServe(path.join(dir, 'config'));
const { ctx, page } = await launch();
try {
  await page.goto(served.url);
  await page.waitForSelector('body[data-ready="1"]');
  // a probe on the page's main thread: the longest gap between 10 ms timer ticks
  await page.evaluate(() => {
    window.__gap = 0;
    let last = performance.now();
    window.__probe = setInterval(() => { const now = performance.now(); window.__gap = Math.max(window.__gap, now - last); last = now; }, 10);
  });
  t = performance.now();
  await page.setInputFiles('#file-input', file);
  await page.waitForSelector('#progress:not([hidden])');
  const tClicks: number[] = [];
  // while the analysis runs, switching views must answer at once
  for (const tab of ['#tab-shape', '#tab-size', '#tab-sky']) {
    const c0 = performance.now();
    await page.click(tab);
    tClicks.push(performance.now() - c0);
  }
  await page.waitForFunction(() => document.body.dataset.analysis && !document.body.classList.contains('busy'), null, { timeout: 180_000 }).catch(async (err) => {
    process.stdout.write(`no result: message "${await page.textContent('#message')}", progress "${await page.textContent('#progress-label')}"\n`);
    throw err;
  });
  await page.click('#tab-findings');
  await page.waitForSelector('li.finding, .findings-none');
  const dropToFindings = (performance.now() - t) / 1000;
  const gap = await page.evaluate(() => { clearInterval(window.__probe); return window.__gap as number; });
  const stars = await page.textContent('#summary [data-k="stars"]');
  process.stdout.write(`drop to first findings: ${dropToFindings.toFixed(1)} s (${stars} stars used)\n`);
  process.stdout.write(`page main thread, longest gap between 10 ms ticks during the analysis: ${gap.toFixed(0)} ms\n`);
  process.stdout.write(`view switches during the analysis: ${tClicks.map((x) => x.toFixed(0)).join(', ')} ms\n`);
} finally {
  await ctx.close();
  served.child.kill('SIGTERM');
  rmSync(dir, { recursive: true, force: true });
}
