/**
 * The shared figures (core/report/svg) and the HTML report, on a report made by the real
 * pipeline from a small simulated frame. Checks use independent computations: analytic
 * inverses, the conversions and check values of shared/reference/optics.md, and the FITS
 * display convention.
 */
import { describe, expect, it, beforeAll } from 'vitest';
import { contours } from 'd3-contour';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { decodeFrame } from '../../core/frame/read.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { diagnose } from '../../core/diagnose/index.ts';
import { buildReport } from '../../core/report/build.ts';
import type { Report } from '../../core/report/types.ts';
import { reportHtml } from '../../core/report/html.ts';
import { formatSummary } from '../../core/cli/summary.ts';
import {
  DAY, NIGHT, PRINT, skySvg, shapeSvg, shapeVectors, sizeSvg, heatGrid, sensorSideSvg, sensorSideData, planeGradient, zonePsfSvg, stampSvg,
  findingsHtml, frameMap, ellipticityFromDistortion, elongationFromDistortion, elongationFromEllipticity, esc, sweepSvg,
} from '../../core/report/svg/index.ts';

let report: Report;

beforeAll(async () => {
  // a small frame through the optics simulator: tilt and a spacing error give a diagnosis to draw
  const scene = parseScene({
    schema: 'skyloupe.scene/1', width: 640, height: 420, seed: 11,
    stars: { count: 260 },
    psf: { kind: 'optics', seeing: { fwhmPx: 2.6 }, aberrations: { tiltXUmAcross: 40, spacingErrorMm: 0.6 } },
  });
  const frame = await decodeFrame(fitsBytes(renderScene(scene)), 'small.fits');
  const a = await analyzeFrame(frame, { workers: 0 });
  const d = diagnose(a.stars, { width: a.frame.width, height: a.frame.height, optics: a.optics, displayTopRow: a.frame.displayTopRow });
  report = buildReport(a, 'small.fits', { field: d.field, diagnosis: d.diagnosis, findings: d.findings });
});

const attr = (svg: string, name: string) => svg.match(new RegExp(`${name}="([^"]*)"`))?.[1];

describe('frame to figure mapping', () => {
  it('shows FITS frames with the first stored row at the bottom', () => {
    // FITS: pixel (1,1) is the lower left when displayed (Pence et al. 2010, A&A 524, A42,
    // section 8.1 convention); the report says topRow 'last' for FITS frames
    expect(report.frame.display.topRow).toBe('last');
    const m = frameMap(report, 1);
    const H = report.frame.height;
    expect(m.y(0)).toBeCloseTo(H - 0.5, 9); // first stored row: bottom pixel row of the figure
    expect(m.y(H - 1)).toBeCloseTo(0.5, 9);
    expect(m.x(0)).toBeCloseTo(0.5, 9);
    // an angle from +x toward +y (storage) turns the other way on a y-down screen
    expect(m.angle(30)).toBe(-30);
  });

  it('marks every clean star in the sky view', () => {
    const svg = skySvg(report, { theme: DAY, width: 800 });
    const clean = report.stars.filter((s) => s.flags.length === 0).length;
    expect(Number(attr(svg, 'data-clean-marked'))).toBe(clean);
    expect((svg.match(/class="star"/g) ?? []).length).toBe(clean);
  });
});

describe('shape conversions (optics.md 1.3 and section 8 check values)', () => {
  it('ellipticity and elongation from the distortion', () => {
    // q = b/a = 0.9 -> e = (1 - q^2)/(1 + q^2) = 0.104972 (optics.md section 8)
    expect(ellipticityFromDistortion(0.104972)).toBeCloseTo(0.1, 5);
    expect(elongationFromDistortion(0.104972)).toBeCloseTo(1 / 0.9, 5);
    // ellipticity 1 - b/a = 0.2 -> a/b = 1.25
    expect(elongationFromEllipticity(0.2)).toBeCloseTo(1.25, 12);
  });

  it('draws per-star lines along the long axis with length proportional to a/b - 1', () => {
    const svg = shapeSvg(report, { theme: DAY, mode: 'stars', width: 900 });
    const lines = [...svg.matchAll(/<line x1="([-\d.]+)" y1="([-\d.]+)" x2="([-\d.]+)" y2="([-\d.]+)" stroke="[^"]+" stroke-width="1.2" stroke-linecap="round" data-elong="([\d.]+)"/g)];
    const vectors = shapeVectors(report, 'stars');
    expect(lines.length).toBe(vectors.length);
    // length / (a/b - 1) is one constant (the scale) for every line below the cut; lines above
    // the cut (odd stars) all have the one longest length
    const lens = lines.map((l) => Math.hypot(+l[3] - +l[1], +l[4] - +l[2]));
    const maxLen = Math.max(...lens);
    const below = lines.map((l, i) => ({ len: lens[i], el: +l[5] })).filter((x) => x.len > 4 && x.len < maxLen - 0.05);
    expect(below.length).toBeGreaterThan(20);
    const k = below[0].len / (below[0].el - 1);
    for (const x of below) expect(x.len / (x.el - 1) / k).toBeCloseTo(1, 1);
    const cutAt = 1 + maxLen / k;
    for (const [i, l] of lines.entries()) if (+l[5] > cutAt + 0.01) expect(lens[i]).toBeCloseTo(maxLen, 1);
    // direction: a star at theta (storage, y down) is drawn at -theta on screen (FITS display flips y)
    const s = vectors.find((v) => v.elongation > 1.15) ?? vectors[0];
    const l = lines[vectors.indexOf(s)];
    const screen = (Math.atan2(+l[4] - +l[2], +l[3] - +l[1]) * 180) / Math.PI;
    const expected = -s.thetaDeg;
    const diff = ((screen - expected) % 180 + 270) % 180 - 90; // axes: equal modulo 180 deg
    expect(Math.abs(diff)).toBeLessThan(1);
  });
});

describe('heat maps and contours', () => {
  it('places d3-contour lines where a linear ramp crosses the level', () => {
    // independent check of the grid convention used by size.ts: value k at cell [k, k+1]
    const n = 10;
    const values = Array.from({ length: n * 4 }, (_, i) => i % n); // v = column index
    const [c] = contours().size([n, 4]).thresholds([4.5])(values);
    // points off the grid border (the ring closes along the border)
    const xs = c.coordinates.flat(2).filter((p) => p[1] > 0 && p[1] < 4 && p[0] > 0 && p[0] < n).map((p) => p[0]);
    expect(xs.length).toBeGreaterThan(2);
    // v(u) = u - 0.5 (value k sits at the cell centre k + 0.5), so v = 4.5 at u = 5
    for (const x of xs) expect(x).toBeCloseTo(5, 9);
  });

  it('maps FWHM in arcsec as FWHM in px times the plate scale', () => {
    const px = heatGrid(report, 'fwhmPx');
    const as = heatGrid(report, 'fwhmArcsec');
    const plate = report.frame.optics.plateScaleArcsecPerPx!;
    // plate scale 206.265 p/f (optics.md section 7): 3.76 um at 300 mm = 2.5852 "/px
    expect(plate).toBeCloseTo((206.265 * 3.76) / 300, 3);
    expect(px && as).toBeTruthy();
    for (let i = 0; i < px!.values.length; i += 37) expect(as!.values[i]).toBeCloseTo(px!.values[i] * plate, 9);
  });

  it('keeps the map range inside the spread of the stars it was fitted to', () => {
    const svg = sizeSvg(report, { theme: DAY, quantity: 'fwhmPx' });
    const lo = Number(attr(svg, 'data-min'));
    const hi = Number(attr(svg, 'data-max'));
    const f = report.stars.filter((s) => s.flags.length === 0).map((s) => s.fwhmPx).sort((a, b) => a - b);
    expect(lo).toBeGreaterThan(f[Math.floor(0.01 * f.length)] * 0.9);
    expect(hi).toBeLessThan(f[Math.floor(0.99 * f.length)] * 1.1);
    expect(svg).toContain('class="contours"');
  });

  it('says when arcseconds cannot be shown', () => {
    const noScale: Report = { ...report, frame: { ...report.frame, optics: { ...report.frame.optics, plateScaleArcsecPerPx: null } } };
    expect(sizeSvg(noScale, { theme: DAY, quantity: 'fwhmArcsec' })).toContain('arcseconds need the focal length and the pixel size');
  });
});

describe('focus plane', () => {
  it('recovers the across-frame focus change from the plane gradient', () => {
    // gx * W must give back the change across the width, gy * H across the height
    const g = planeGradient({ axisDeg: 20 }, { x: 25, y: 8 }, 2400, 1600)!;
    expect(g.gx * 2400).toBeCloseTo(25, 12);
    expect(g.gy * 1600).toBeCloseTo(8, 12);
    // an axis pointing into -y flips the sign of the y part only
    const h = planeGradient({ axisDeg: -20 }, { x: 25, y: 8 }, 2400, 1600)!;
    expect(h.gx).toBeGreaterThan(0);
    expect(h.gy).toBeLessThan(0);
  });

  it('cuts the sensor along the diagnosis axis and writes its edge-to-edge µm', () => {
    const svg = sensorSideSvg(report, { theme: DAY });
    const d = sensorSideData(report)!;
    const t = (report.diagnosis as { tilt: { axisDeg: number } }).tilt;
    expect(d.sections[0].angleDeg).toBe(t.axisDeg);
    expect(svg).toContain(`${d.endToEnd.toFixed(1)}`);
    expect(svg).toContain('µm');
  });
});

describe('zone stacks, stamps and panels', () => {
  it('draws the frame\'s zone stacks, each with the stars it holds', () => {
    const svg = zonePsfSvg(report, { theme: DAY, width: 980 });
    const zp = report.zonePsf!;
    expect(zp.zones).toHaveLength(9);
    // every stacked star is a clean star of its zone
    for (const z of zp.zones) {
      expect(svg).toContain(`data-zone="${z.name}" data-col="${z.col}" data-row="${z.row}" data-stars="${z.stacked}"`);
      for (const i of z.members) {
        const s = report.stars[i];
        expect(s.flags).toEqual([]);
        expect(s.x).toBeGreaterThanOrEqual(z.bounds.x0);
        expect(s.x).toBeLessThan(z.bounds.x1);
        expect(s.y).toBeGreaterThanOrEqual(z.bounds.y0);
        expect(s.y).toBeLessThan(z.bounds.y1);
      }
    }
    // the stack of many stars is as wide as its stars (median FWHM of the zone's members, within 10 %)
    const centre = zp.zones.find((z) => z.name === 'centre')!;
    // one value everywhere: the CLI prints the same stack numbers (centre: the middle row, middle cell)
    const cli = formatSummary(report).split('\n');
    const head = cli.findIndex((l) => l.startsWith('stacked stars per zone'));
    expect(cli[head + 2].split('|')[1].trim().split(/\s+/)).toEqual([centre.fwhmPx!.toFixed(2), centre.ellipticity!.toFixed(3), String(centre.stacked)]);
    const fw = centre.members.map((i) => report.stars[i].fwhmPx).sort((a, b) => a - b);
    expect(Math.abs(centre.fwhmPx! / fw[Math.floor(fw.length / 2)] - 1)).toBeLessThan(0.1);
  });

  it('stretches a stamp from its lowest (black) to its highest pixel (white)', () => {
    const values = [0, 10, 100, 1000];
    const svg = stampSvg({ x0: 0, y0: 0, w: 2, h: 2, values, flipY: false, star: report.stars[0] }, { theme: DAY, size: 20 });
    expect(svg).toContain('fill="rgb(0,0,0)"');
    expect(svg).toContain('fill="rgb(255,255,255)"');
    // asinh stretch (Lupton et al. 2004), beta 10: 100 of 1000 -> 255 asinh(1)/asinh(10)
    const g = Math.round((255 * Math.asinh(1)) / Math.asinh(10));
    expect(svg).toContain(`fill="rgb(${g},${g},${g})"`);
    // night: red only
    const night = stampSvg({ x0: 0, y0: 0, w: 2, h: 2, values, flipY: false, star: report.stars[0] }, { theme: NIGHT, size: 20 });
    expect(night).not.toMatch(/rgb\(\d+,[1-9]/);
  });

  it('escapes text from the report', () => {
    const html = findingsHtml([{ code: 'x', severity: 'major', message: '<img src=x onerror=alert(1)> & "q"' }]);
    expect(html).not.toContain('<img');
    expect(html).toContain('&lt;img src=x onerror=alert(1)&gt; &amp; &quot;q&quot;');
    expect(esc("'")).toBe('&#39;');
  });

  it('draws the sweep best value and its band', () => {
    const svg = sweepSvg({
      metric: 'corner radial minus tangential', unit: 'px²', bestSpacingMm: 55.2, uncertaintyMm: 0.1, note: '', evidence: 'zero-crossing', signed: true,
      points: [54.5, 55, 55.5, 56].map((s, i) => ({ id: `p${i}`, name: `${s}mm`, spacingMm: s, metric: 0.8 * (s - 55.2), metricErr: 0.05 })),
      curve: [{ spacingMm: 54.5, metric: -0.56 }, { spacingMm: 56, metric: 0.64 }], series: null,
    }, { theme: DAY });
    expect(attr(svg, 'data-points')).toBe('4');
    expect(svg).toContain('best 55.20 ± 0.10 mm');
    expect(svg).toContain('class="zero"');
  });
});

describe('HTML report', () => {
  it('is self-contained, printable and carries the report', () => {
    const html = reportHtml(report, { name: 'small.fits' });
    // no scripts that run, no outside resources: every URL is a namespace or a data: URL
    expect(html).not.toMatch(/<script(?![^>]*type="application\/json")/);
    const urls = [...html.matchAll(/(?:href|src)="([^"]+)"/g)].map((m) => m[1]);
    for (const u of urls) expect(u.startsWith('data:') || u.startsWith('#') || u.startsWith('url(#')).toBe(true);
    expect(html).toContain("Content-Security-Policy");
    expect(html).toContain('@media print');
    // the figures: sky, shape, three size maps, the sensor edge-on, the zone stacks
    expect((html.match(/<svg /g) ?? []).length).toBe(7);
    expect(html).toContain('id="sensor-side-svg"');
    expect(html).toContain('id="zone-psf-svg"');
    const json = html.match(/<script type="application\/json" id="skyloupe-report">([\s\S]*?)<\/script>/)![1];
    const back = JSON.parse(json) as Report;
    expect(back.summary).toEqual(report.summary);
    expect(back.stars.length).toBe(report.stars.length);
    for (const f of report.findings ?? []) expect(html).toContain(esc(f.message));
  });

  it('uses the print colours unless told otherwise', () => {
    expect(reportHtml(report)).toContain(`data-theme="${PRINT.name}"`);
  });
});
