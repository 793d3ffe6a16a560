/**
 * One quantity, one name, one value (issue 12 item 2): for the demo frame, the CLI text, the
 * JSON, the CSV star table and the HTML report carry the same typical star ellipticity and
 * shared ellipticity under the same names. The values are recomputed here from the CSV's star
 * rows with the published definitions, not taken from the engine: the median of 1 - b/a over
 * the clean stars (Source Extractor's ELLIPTICITY, optics.md 1.2), and the ellipticity of the
 * mean distortion vector, (b/a)^2 = (1 - |e|)/(1 + |e|) (optics.md 1.3 and 1.6), each corner
 * quadrant on its own. Zones as the report defines them: centre within 25 % of the half-diagonal,
 * corners beyond 75 %.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';

const dir = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-words-'));
let text = '';
let json: any;
let csv: Record<string, string>[] = [];
let html = '';

function parseCsv(s: string): Record<string, string>[] {
  const lines = s.trim().split(/\r\n/);
  const head = lines[0].split(',');
  return lines.slice(1).map((l) => Object.fromEntries(l.split(',').map((v, i) => [head[i], v])));
}

const median = (v: number[]) => {
  const a = [...v].sort((x, y) => x - y);
  const n = a.length;
  return n % 2 ? a[(n - 1) / 2] : (a[n / 2 - 1] + a[n / 2]) / 2;
};

/** Stars without measured moments (empty e1, e2 in the CSV) carry no shape and are left out. */
function shared(all: { x: number; y: number; e1: number; e2: number }[]): { sum: number; n: number } {
  const rows = all.filter((r) => Number.isFinite(r.e1) && Number.isFinite(r.e2));
  const e1 = rows.reduce((s, r) => s + r.e1, 0) / rows.length;
  const e2 = rows.reduce((s, r) => s + r.e2, 0) / rows.length;
  const e = Math.hypot(e1, e2);
  return { sum: rows.length * (1 - Math.sqrt((1 - e) / (1 + e))), n: rows.length };
}

beforeAll(() => {
  const out = { json: path.join(dir, 'demo.json'), csv: path.join(dir, 'demo.csv'), html: path.join(dir, 'demo.html') };
  const r = spawnSync(process.execPath, ['bin/skyloupe.mjs', 'analyze', 'sample-data/demo-frame.fits', '--no-sky', '--json', out.json, '--csv', out.csv, '--html', out.html], { encoding: 'utf8', timeout: 180_000 });
  if (r.status !== 0) throw new Error(`analyze failed: ${r.stderr}`);
  text = r.stdout;
  json = JSON.parse(readFileSync(out.json, 'utf8'));
  csv = parseCsv(readFileSync(out.csv, 'utf8'));
  html = readFileSync(out.html, 'utf8');
}, 200_000);

afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('the demo frame: one name, one value in CLI, JSON, CSV and HTML', () => {
  const clean = () => csv.filter((r) => r.flags === '' && r.fwhmPx !== '').map((r) => ({ x: +r.x, y: +r.y, e1: r.e1 === '' ? NaN : +r.e1, e2: r.e2 === '' ? NaN : +r.e2, ellipticity: +r.ellipticity }));
  const zoneOf = (s: { x: number; y: number }) => {
    const cx = (json.frame.width - 1) / 2;
    const cy = (json.frame.height - 1) / 2;
    const r = Math.hypot(s.x - cx, s.y - cy) / Math.hypot(cx, cy);
    return r <= 0.25 ? 'center' : r >= 0.75 ? 'corners' : 'middle';
  };

  it('typical star ellipticity: the median of the CSV\'s clean stars is the JSON\'s, printed alike by the CLI and the HTML', () => {
    const stars = clean();
    expect(stars.length).toBe(json.summary.stars);
    // the CSV rounds each star to 1e-4, the JSON the median: they agree to 1e-4
    expect(Math.abs(median(stars.map((s) => s.ellipticity)) - json.summary.medianEllipticity)).toBeLessThanOrEqual(1.0001e-4);
    const v = json.summary.medianEllipticity.toFixed(3);
    expect(text).toContain(`typical star ellipticity ${v}`);
    expect(html).toMatch(new RegExp(`data-k="ellipticity"[^>]*>${v}<`));
    for (const z of ['center', 'corners'] as const) {
      const zs = stars.filter((s) => zoneOf(s) === z);
      expect(zs.length).toBe(json.summary[z].stars);
      expect(Math.abs(median(zs.map((s) => s.ellipticity)) - json.summary[z].medianEllipticity)).toBeLessThanOrEqual(1.0001e-4);
      expect(html).toMatch(new RegExp(`data-k="${z}-medianEllipticity"[^>]*>${json.summary[z].medianEllipticity.toFixed(3)}<`));
    }
  });

  it('shared ellipticity: recomputed from the CSV\'s e1, e2 per zone (corners per quadrant), the same in JSON, CLI and HTML', () => {
    const stars = clean();
    const cx = (json.frame.width - 1) / 2;
    const cy = (json.frame.height - 1) / 2;
    const centre = shared(stars.filter((s) => zoneOf(s) === 'center'));
    const quads = [0, 1, 2, 3].map((q) => stars.filter((s) => zoneOf(s) === 'corners' && (s.x >= cx ? 1 : 0) + (s.y >= cy ? 2 : 0) === q)).filter((q) => q.length);
    const corners = quads.map(shared).reduce((a, b) => ({ sum: a.sum + b.sum, n: a.n + b.n }));
    // the CSV rounds e1, e2 to 1e-4
    expect(Math.abs(centre.sum / centre.n - json.summary.center.sharedEllipticity)).toBeLessThan(2e-4);
    expect(Math.abs(corners.sum / corners.n - json.summary.corners.sharedEllipticity)).toBeLessThan(2e-4);
    const c = json.summary.center.sharedEllipticity.toFixed(3);
    const k = json.summary.corners.sharedEllipticity.toFixed(3);
    expect(text).toMatch(new RegExp(`centre: .*shared ellipticity ${c}`));
    expect(text).toMatch(new RegExp(`corners: .*shared ellipticity ${k}`));
    expect(html).toMatch(new RegExp(`data-k="center-sharedEllipticity"[^>]*>${c}<`));
    expect(html).toMatch(new RegExp(`data-k="corners-sharedEllipticity"[^>]*>${k}<`));
  });

  it('the HTML embeds the same report; no bare "e", no severity codes in its text', () => {
    const embedded = JSON.parse(/<script type="application\/json" id="skyloupe-report">([\s\S]*?)<\/script>/.exec(html)![1]);
    expect(embedded.summary).toEqual(json.summary);
    const visible = html.replace(/<script[\s\S]*?<\/script>/g, '').replace(/<style[\s\S]*?<\/style>/g, '').replace(/<[^>]*>/g, ' ');
    expect(visible).not.toMatch(/· e \d/);
    for (const f of json.findings) expect(visible).not.toContain(f.code);
    expect(visible).not.toMatch(/\d ?um\b|\+-|\d deg\b/);
    expect(text).not.toMatch(/\d ?um\b|\+-|\d deg\b|MAJOR/);
  });

  it('the HTML report has a table of contents and the pictures the page shows: the sky and the stacked stars', () => {
    expect(html).toMatch(/<nav class="toc"[\s\S]*href="#sky"[\s\S]*href="#stacks"/);
    const sky = /<section id="sky">([\s\S]*?)<\/section>/.exec(html)![1];
    expect(sky).toMatch(/<image href="data:image\/jpeg;base64,/);
    // the close-ups are the report's zone stacks: one drawn stack per zone of report.zonePsf
    const stacks = /<section id="stacks">([\s\S]*?)<\/section>/.exec(html)![1];
    expect((stacks.match(/<g class="zone-psf" /g) ?? []).length).toBe(json.zonePsf.zones.length);
  });
});
