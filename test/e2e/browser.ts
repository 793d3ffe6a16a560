/**
 * Shared set-up of the browser tests: Debian's Chromium driven by playwright-core against
 * `skyloupe serve`. Chromium missing is an error, never a skip (CI installs it with apt).
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';

export const CHROMIUM = '/usr/bin/chromium';
export const SHOTS = path.resolve('test-output/screenshots');
export const OUT = path.resolve('test-output/e2e');

export interface Served {
  url: string;
  token: string;
  origin: string;
  child: ChildProcess;
}

/** Starts `skyloupe serve --port 0` and reads the page's URL from its first line of output. */
export async function startServe(configDir: string): Promise<Served> {
  const child = spawn(process.execPath, ['bin/skyloupe.mjs', 'serve', '--port', '0', '--config-dir', configDir], { stdio: ['ignore', 'pipe', 'inherit'] });
  const url = await new Promise<string>((resolve, reject) => {
    let buf = '';
    const t = setTimeout(() => reject(new Error('skyloupe serve printed no URL within 60 s')), 60_000);
    child.stdout!.on('data', (c: Buffer) => {
      buf += c.toString();
      const nl = buf.indexOf('\n');
      if (nl >= 0) { clearTimeout(t); resolve(buf.slice(0, nl).trim()); }
    });
    child.once('exit', (code) => { clearTimeout(t); reject(new Error(`skyloupe serve exited with ${code}`)); });
  });
  const u = new URL(url);
  return { url, token: u.searchParams.get('token') ?? '', origin: u.origin, child };
}

export async function launch(): Promise<{ ctx: BrowserContext; page: Page }> {
  if (!existsSync(CHROMIUM)) {
    throw new Error(`Debian's Chromium is missing (${CHROMIUM}): install it with apt-get install chromium; the browser tests cannot run without it`);
  }
  mkdirSync(SHOTS, { recursive: true });
  mkdirSync(OUT, { recursive: true });
  const profile = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-chromium-'));
  const ctx = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM,
    headless: true,
    acceptDownloads: true,
    viewport: { width: 1366, height: 768 },
    args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'],
  });
  // the profile is this launch's alone: gone when the browser closes
  // Chromium may still be writing its profile as the context closes: retry, and never fail a test over it
  ctx.once('close', () => { try { rmSync(profile, { recursive: true, force: true, maxRetries: 10, retryDelay: 100 }); } catch { /* left for the OS's tmp cleaning */ } });
  const page = ctx.pages()[0] ?? (await ctx.newPage());
  return { ctx, page };
}

/** Stops `skyloupe serve` and waits until it has exited (so its files can be removed after). */
export async function stopServe(s: Served | undefined): Promise<void> {
  const child = s?.child;
  if (!child || child.exitCode !== null || child.signalCode !== null) return;
  const gone = new Promise<void>((resolve) => child.once('exit', () => resolve()));
  child.kill('SIGTERM');
  await gone;
}

export async function shot(page: Page, name: string): Promise<void> {
  await page.screenshot({ path: path.join(SHOTS, `${name}.png`) });
}
