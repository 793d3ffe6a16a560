/**
 * End-to-end (Debian's Chromium via playwright-core, browser mode): the page speaks with the
 * CLI's names and values (issue 12 items 2, 3, 7). The demo frame is analysed by the page and
 * by `skyloupe analyze`; the page's summary must show the CLI's typical star and shared
 * ellipticities under the same names, its findings the same severity words, and no view may
 * show a finding code, "um", "+-", "deg" or a bare "significant" verdict. Checked on the DOM.
 */
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { BrowserContext, Page } from 'playwright-core';
import type { Report } from '../../core/report/types.ts';
import { SEVERITY_WORDS } from '../../core/report/words.ts';
import { launch, startServe, type Served } from './browser.ts';

declare const document: any;

let served: Served;
let ctx: BrowserContext;
let page: Page;
let report: Report;
let cli = '';
let dir: string;
const SHOTS = process.env.SKYLOUPE_SHOTS ?? '';

async function currentReport(): Promise<Report> {
  const id = (await page.getAttribute('body', 'data-analysis')) ?? '';
  const res = await fetch(`${served.origin}/api/export?id=${id}&kind=json`, { headers: { 'X-Skyloupe-Token': served.token } });
  return (await res.json()) as Report;
}

beforeAll(async () => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-words-e2e-'));
  const r = spawnSync(process.execPath, ['bin/skyloupe.mjs', 'analyze', 'sample-data/demo-frame.fits'], { encoding: 'utf8', timeout: 180_000 });
  if (r.status !== 0) throw new Error(`analyze failed: ${r.stderr}`);
  cli = r.stdout;
  served = await startServe(path.join(dir, 'config'));
  ({ ctx, page } = await launch());
  await page.goto(served.url);
  await page.waitForSelector('body[data-ready="1"]');
  await page.click('#btn-demo');
  await page.waitForFunction(() => document.body.dataset.analysis && !document.body.classList.contains('busy'), null, { timeout: 120_000 });
  report = await currentReport();
}, 300_000);

afterAll(async () => {
  await ctx?.close();
  served?.child.kill('SIGTERM');
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe('the page and the CLI: one name, one value (demo frame)', () => {
  it('the summary shows the CLI\'s typical star and shared ellipticities under the same names', async () => {
    const text = (sel: string) => page.textContent(`#summary ${sel}`).then((t) => (t ?? '').trim());
    const summary = (await page.textContent('#summary')) ?? '';
    const all = await text('[data-k="ellipticity"]');
    expect(cli).toContain(`typical star ellipticity ${all}`);
    expect(summary).toContain(`typical star ellipticity ${all}`);
    for (const [zone, line] of [['center', 'centre:'], ['corners', 'corners:']] as const) {
      const typical = await text(`[data-k="${zone}-medianEllipticity"]`);
      const shared = await text(`[data-k="${zone}-sharedEllipticity"]`);
      const cliLine = cli.split('\n').find((l) => l.startsWith(line)) ?? '';
      expect(cliLine).toContain(`typical star ellipticity ${typical}`);
      expect(cliLine).toContain(`shared ellipticity ${shared}`);
      expect(Number(shared)).toBeCloseTo(report.summary[zone].sharedEllipticity!, 3);
    }
    expect(summary).not.toMatch(/· e \d/);
  });

  it('the findings carry the CLI\'s severity words and never a code', async () => {
    await page.click('#tab-findings');
    const heads = await page.$$eval('#view .finding .severity', (els: any[]) => els.map((e) => e.textContent.trim()));
    expect(heads.length).toBe(report.findings!.length);
    for (const h of heads) expect(Object.values(SEVERITY_WORDS)).toContain(h);
    for (const h of new Set(heads)) expect(cli).toContain(`  ${h}`);
    const count = (await page.textContent('#summary .findings-count')) ?? '';
    const major = report.findings!.filter((f) => f.severity === 'major').length;
    expect(count).toMatch(major ? new RegExp(`${major} to act on`) : /^(?!.*to act on)/);
  });

  it('no view shows a finding code, um, +-, deg or a bare "significant" verdict', async () => {
    const tabs = await page.$$eval('[role="tab"][data-view]', (els: any[]) => els.map((e) => e.dataset.view as string));
    expect(tabs.length).toBeGreaterThanOrEqual(6);
    if (SHOTS) mkdirSync(SHOTS, { recursive: true });
    for (const v of tabs) {
      await page.click(`#tab-${v}`);
      await page.waitForFunction((name) => document.querySelector('#view')?.dataset.view === name, v);
      const t: string = await page.$eval('#view', (el: any) => el.textContent ?? '');
      for (const f of report.findings!) expect(t, `${v}: ${f.code}`).not.toContain(f.code);
      expect(t, v).not.toMatch(/\d ?um\b|\+-|\d ?deg\b/);
      expect(t, v).not.toMatch(/Tilt: (not )?significant/);
      if (SHOTS) await page.screenshot({ path: path.join(SHOTS, `page-${v}.png`) });
    }
  });
});
