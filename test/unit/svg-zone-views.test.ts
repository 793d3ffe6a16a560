/**
 * The two figures of our own: stacked stars per zone and the sensor edge-on. Checked against
 * independent computations on made-up reports: the plane geometry of a tilt (DESIGN.md: the
 * focus error changes linearly across the frame, acrossFrameUm over the full width / height),
 * the half-maximum contour of a Gaussian (FWHM = 2 sqrt(2 ln 2) sigma, common practice) and the
 * FITS display convention (last stored row on top).
 */
import { describe, expect, it } from 'vitest';
import type { Report } from '../../core/report/types.ts';
import type { ZonePsf, ZonePsfSection } from '../../core/field/zone-psf-types.ts';
import { DAY, NIGHT, PRINT } from '../../core/report/svg/theme.ts';
import { sensorSideData, sensorSideSvg, sensorSideLayout } from '../../core/report/svg/sensor-side.ts';
import { zonePsfSvg, PSF_CONTOURS } from '../../core/report/svg/zone-psf.ts';

const W = 3000;
const H = 2000;
const PIXEL_UM = 4;

/** A report whose tilt is the plane delta = gx (x - cx) + gy (y - cy), µm, with the diagnosis's conventions. */
function tiltReport(gx: number, gy: number, opts: { topRow?: 'first' | 'last'; significant?: boolean } = {}): Report {
  const cx = (W - 1) / 2;
  const cy = (H - 1) / 2;
  const corner = (x: number, y: number, name: string) => {
    const d = 5 + gx * (x - cx) + gy * (y - cy); // a centre 5 µm off focus
    return { name, xPx: x, yPx: y, defocusUm: Math.abs(d), defocusErrUm: 0.5, blurDiameterPx: Math.abs(d) / 4 / PIXEL_UM, blurDiameterErrPx: 0.05 };
  };
  return {
    frame: { width: W, height: H, display: { topRow: opts.topRow ?? 'first', note: '' }, optics: { pixelSizeUm: PIXEL_UM, fNumber: 4 } },
    diagnosis: {
      tilt: {
        significant: opts.significant ?? true, supported: true, note: null,
        axisDeg: (Math.atan2(gy, gx) * 180) / Math.PI, axisErrDeg: 2,
        acrossFrameUm: { x: Math.abs(gx) * W, y: Math.abs(gy) * H }, acrossFrameErrUm: { x: 1, y: 1 },
        acrossFrameBlurPx: { x: 1, y: 1 }, acrossFrameBlurErrPx: { x: 0.1, y: 0.1 },
        signResolved: false, corners: [corner(-0.5, -0.5, 'a'), corner(W - 0.5, -0.5, 'b'), corner(-0.5, H - 0.5, 'c'), corner(W - 0.5, H - 0.5, 'd')],
        significance: 9, starsUsed: 500,
      },
    },
    findings: [],
  } as unknown as Report;
}

/** Where the line through the centre along (ux, uy) leaves the frame, by stepping outward (independent of the figure's own formula). */
function exitPoint(ux: number, uy: number): { x: number; y: number } {
  const cx = (W - 1) / 2;
  const cy = (H - 1) / 2;
  let t = 0;
  for (let step = 1024; step >= 1e-6; step /= 2) {
    while (cx + (t + step) * ux >= -0.5 && cx + (t + step) * ux <= W - 0.5 && cy + (t + step) * uy >= -0.5 && cy + (t + step) * uy <= H - 0.5) t += step;
  }
  return { x: cx + t * ux, y: cy + t * uy };
}

describe('sensor edge-on: the drawn geometry is the report\'s', () => {
  const gx = 0.008; // µm per px: 24 µm across the width
  const gy = -0.004; // -8 µm across the height
  const report = tiltReport(gx, gy);
  const d = sensorSideData(report)!;

  it('puts each end of the along-axis cut at the focus offset of the tilt plane there', () => {
    const a = Math.atan2(gy, gx);
    for (const e of d.sections[0].ends) {
      const sgn = Math.sign((e.xPx - (W - 1) / 2) * Math.cos(a) + (e.yPx - (H - 1) / 2) * Math.sin(a));
      const p = exitPoint(sgn * Math.cos(a), sgn * Math.sin(a));
      expect(e.xPx).toBeCloseTo(p.x, 4);
      expect(e.yPx).toBeCloseTo(p.y, 4);
      expect(e.offset).toBeCloseTo(gx * (p.x - (W - 1) / 2) + gy * (p.y - (H - 1) / 2), 4);
      // distance along the sensor in µm
      expect(Math.abs(e.along)).toBeCloseTo(Math.hypot(p.x - (W - 1) / 2, p.y - (H - 1) / 2) * PIXEL_UM, 3);
    }
    // across the axis the plane does not change: no offset at either end
    for (const e of d.sections[1].ends) expect(Math.abs(e.offset)).toBeLessThan(1e-9);
    expect(d.endToEnd).toBeCloseTo(Math.abs(d.sections[0].ends[0].offset - d.sections[0].ends[1].offset), 12);
  });

  it('draws each edge its µm times the stated exaggeration away from best focus, the far side away from the lens', () => {
    const svg = sensorSideSvg(report, { theme: DAY, width: 900 });
    const zScale = Number(svg.match(/data-z-scale="([^"]+)"/)![1]);
    const sScale = Number(svg.match(/data-s-scale="([^"]+)"/)![1]);
    const ex = Number(svg.match(/data-exaggeration="([^"]+)"/)![1]);
    // both axes in µm: the offsets are drawn `ex` times larger than distances on the sensor
    expect(zScale / sScale).toBeCloseTo(ex, 9);
    expect(svg).toContain(`drawn ${ex}× larger`);
    const edges = [...svg.matchAll(/<g class="edge" data-name="([^"]+)" data-offset="([^"]+)" data-drawn-dx="([^"]+)">/g)];
    expect(edges).toHaveLength(4);
    const along = d.sections[0].ends;
    for (const e of along) {
      const m = edges.find((g) => g[1] === e.name)!;
      // drawn offset = report µm x screen px per µm (rounded to 0.01 screen px in the markup)
      expect(Number(m[3])).toBeCloseTo(e.offset * zScale, 1);
      expect(Math.abs(Number(m[3]))).toBeGreaterThan(20);
    }
    // the lens is drawn left of best focus: a positive offset (behind focus) is drawn farther from it
    const lensX = Number(svg.match(/class="lens" d="M([\d.]+),/)![1]);
    const focusX = Number(svg.match(/class="focal-surface" x1="([\d.]+)"/)![1]);
    expect(lensX).toBeLessThan(focusX);
    // one frame cannot tell the sides apart: the mirror reading is drawn too
    expect(svg).toContain('class="sensor-mirror"');
  });

  it('names the softer edge (the larger corner blur) as the one to move, with the edge-to-edge µm', () => {
    const svg = sensorSideSvg(report, { theme: PRINT, width: 900 });
    // gx > 0, gy < 0 with a centre 5 µm off: the corner at large x and small y is farthest from focus
    const far = d.sections[0].ends.find((e) => e.xPx > W / 2)!;
    expect(d.softer).toBe(far.name);
    expect(svg).toContain(`move the ${far.name} edge ${d.endToEnd.toFixed(1)}`);
    expect(svg).not.toMatch(/\bum\b|\+-|\bdeg\b/);
  });

  it('names the ends as displayed: with the last row on top, small y is at the bottom', () => {
    const up = sensorSideData(tiltReport(0, 0.01, { topRow: 'first' }))!;
    const down = sensorSideData(tiltReport(0, 0.01, { topRow: 'last' }))!;
    expect(up.sections[0].ends.map((e) => e.name)).toEqual(['top', 'bottom']);
    expect(down.sections[0].ends.map((e) => e.name)).toEqual(['top', 'bottom']);
    // the upper end is y = -0.5 in storage when the first row is on top, y = H - 0.5 otherwise
    expect(up.sections[0].ends[0].yPx).toBeCloseTo(-0.5, 6);
    expect(down.sections[0].ends[0].yPx).toBeCloseTo(H - 0.5, 6);
  });

  it('draws a focus pair\'s settled tilt: the side farther from the lens behind focus, no mirror reading', () => {
    // focus pair convention (DESIGN.md, core/series/focus-pair-types.ts): change of best-focus
    // position; -30 across the width = best focus 30 µm nearer at the right: the right side is behind focus
    const signed = { acrossFrameUm: { x: -30, y: 0 }, acrossFrameErrUm: { x: 1, y: 1 }, axisErrDeg: 1, significant: true };
    const r = tiltReport(0.001, 0);
    const dd = sensorSideData(r, signed)!;
    expect(dd.signResolved).toBe(true);
    const right = dd.sections[0].ends.find((e) => e.name === 'right')!;
    const left = dd.sections[0].ends.find((e) => e.name === 'left')!;
    // the plane 30 µm across the width: +15 µm at the right edge, -15 µm at the left
    expect(right.offset).toBeCloseTo(15, 6);
    expect(left.offset).toBeCloseTo(-15, 6);
    const svg = sensorSideSvg(r, { theme: DAY, signed });
    expect(svg).not.toContain('class="sensor-mirror"');
    expect(svg).toContain('right edge: 15.0 ± 0.5 µm behind focus');
    expect(svg).toContain('left edge: 15.0 ± 0.5 µm in front of focus');
    const action = [...svg.matchAll(/class="tilt-action">([^<]*)</g)].map((m) => m[1]).join(' ');
    expect(action).toContain('the right edge sits behind focus (too far from the lens)');
    expect(action).toContain('bring the right edge 30.0 ± 1.0 µm toward the lens');
    const drawn = [...svg.matchAll(/data-name="(left|right)" data-offset="[^"]+" data-drawn-dx="([^"]+)"/g)];
    // behind focus is drawn away from the lens (to the right of best focus)
    expect(Number(drawn.find((m) => m[1] === 'right')![2])).toBeGreaterThan(0);
    expect(Number(drawn.find((m) => m[1] === 'left')![2])).toBeLessThan(0);
  });

  it('falls back to px of blur without optics, with no exaggeration claimed', () => {
    const r = tiltReport(0.008, -0.004);
    const t = (r.diagnosis as { tilt: Record<string, unknown> }).tilt;
    t.acrossFrameUm = { x: null, y: null };
    t.acrossFrameBlurPx = { x: 3, y: 1 };
    (r.frame.optics as { pixelSizeUm: number | null }).pixelSizeUm = null;
    const dd = sensorSideData(r)!;
    expect(dd.unit).toBe('px blur');
    const svg = sensorSideSvg(r, { theme: DAY });
    expect(svg).toContain('data-exaggeration=""');
    expect(svg).toContain('px of blur');
    // the along-axis ends still differ by the plane's change between them, now in px of blur
    const [e0, e1] = dd.sections[0].ends;
    expect(Math.abs(e0.offset - e1.offset)).toBeGreaterThan(0);
  });

  it('keeps a readable scale for a tiny tilt and says when nothing needs turning', () => {
    const r = tiltReport(0.0002, 0, { significant: false });
    const dd = sensorSideData(r)!;
    const L = sensorSideLayout(dd, 400, 300);
    expect(L.exaggeration).toBeGreaterThanOrEqual(1);
    expect(sensorSideSvg(r, { theme: NIGHT })).toContain('Nothing to turn');
  });
});

/** A zone stack of a round Gaussian of the given FWHM (stack px), unit light, in ppm. */
function gaussianZone(col: number, row: number, name: string, fwhm: number, side: number, stacked: number): ZonePsf {
  const s = fwhm / (2 * Math.sqrt(2 * Math.LN2));
  const h = (side - 1) / 2;
  const v: number[] = [];
  let sum = 0;
  for (let y = 0; y < side; y++) for (let x = 0; x < side; x++) { const g = Math.exp(-((x - h) ** 2 + (y - h) ** 2) / (2 * s * s)); v.push(g); sum += g; }
  return {
    col, row, name, zone: 'edges', bounds: { x0: 0, y0: 0, x1: 1, y1: 1 }, clean: stacked, stacked, members: Array.from({ length: stacked }, (_, i) => i),
    ppm: v.map((g) => Math.round((g / sum) * 1e6)), fwhmPx: fwhm, fwhmErrPx: 0.01, fwhmMajorPx: fwhm, fwhmMinorPx: fwhm, hfdPx: fwhm, hfdErrPx: 0.01,
    ellipticity: 0.012, ellipticityErr: 0.003, thetaDeg: 0, model: 'gaussian', moffatBeta: null, snr: 500,
  };
}

describe('stacked stars per zone', () => {
  const side = 25;
  const names = [['top-left', 'top', 'top-right'], ['left', 'centre', 'right'], ['bottom-left', 'bottom', 'bottom-right']];
  const section = (flip: boolean): ZonePsfSection => ({
    schema: 'skyloupe.zonepsf/1', cols: 3, rows: 3, side, pixelScale: 1, method: { resampling: '', combine: '', weights: '', measure: '' }, note: null,
    zones: names.flatMap((row, r) => row.map((n, c) => gaussianZone(c, r, flip ? names[2 - r][c] : n, c === 2 && r === 0 ? 8 : 4, side, 10 + 3 * r + c))),
  });
  const report = (flip: boolean) => ({ frame: { width: 600, height: 400, display: { topRow: flip ? 'last' : 'first', note: '' } }, zonePsf: section(flip) }) as unknown as Report;

  it('traces the FWHM with the half-maximum contour (FWHM = 2 sqrt(2 ln 2) sigma)', () => {
    const svg = zonePsfSvg(report(false), { theme: DAY, width: 900 });
    const k = Number((svg.match(/<rect x="([\d.]+)" y="([\d.]+)" width="([\d.]+)" height="\3" fill="[^"]+" stroke/) ?? [])[3]) / side;
    expect(k).toBeGreaterThan(1);
    for (const [zone, fwhm] of [['centre', 4], ['top-right', 8]] as const) {
      const g = svg.split('<g class="zone-psf"').find((p) => p.includes(`data-zone="${zone}"`))!;
      const half = g.match(/<path d="([^"]+)" data-fraction="0.5"/)![1];
      const xs = [...half.matchAll(/[ML]([\d.]+),/g)].map((m) => Number(m[1]));
      // marching squares interpolate linearly between pixel centres: within a third of a pixel
      expect(Math.abs((Math.max(...xs) - Math.min(...xs)) / k - fwhm)).toBeLessThan(0.35);
    }
    expect(PSF_CONTOURS[0]).toBe(0.5);
  });

  it('lays the zones out as the frame is displayed, with their star counts and numbers', () => {
    for (const flip of [false, true]) {
      const r = report(flip);
      const svg = zonePsfSvg(r, { theme: NIGHT, width: 900 });
      const y = (name: string) => Number(svg.split('<g class="zone-psf"').find((p) => p.includes(`data-zone="${name}"`))!.match(/<rect x="[\d.]+" y="([\d.]+)"/)![1]);
      expect(y('top')).toBeLessThan(y('centre'));
      expect(y('centre')).toBeLessThan(y('bottom'));
      for (const z of r.zonePsf!.zones) {
        expect(svg).toContain(`data-zone="${z.name}" data-col="${z.col}" data-row="${z.row}" data-stars="${z.stacked}"`);
        expect(svg).toContain(`${z.stacked} stars · FWHM ${z.fwhmPx!.toFixed(2)} ± 0.01 px`);
      }
    }
  });

  it('shares one brightness scale: the sharper stack is the brighter', () => {
    const svg = zonePsfSvg(report(false), { theme: DAY, width: 900 });
    const peak = Number(svg.match(/data-peak="([^"]+)"/)![1]);
    const zp = report(false).zonePsf!;
    expect(peak).toBe(Math.max(...zp.zones.map((z) => Math.max(...z.ppm!))));
    // a Gaussian's peak pixel holds about 1 / (2 pi sigma^2) of the light (common practice)
    const s = 4 / 2.35482;
    expect(peak / 1e6).toBeCloseTo(1 / (2 * Math.PI * s * s), 2);
  });

  it('says so when there is nothing to stack', () => {
    const empty = { ...report(false), zonePsf: undefined } as unknown as Report;
    expect(zonePsfSvg(empty, { theme: PRINT })).toContain('no clean stars to stack');
  });
});
