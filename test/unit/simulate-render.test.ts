/**
 * End-to-end optics renders: rendered frames measured with plain moments written here,
 * compared with optics.md §4 (defocus from FWHM, worked example), §5 (radial-minus-
 * tangential moment) and §6 (trail variance).
 */
import { describe, expect, it } from 'vitest';
import { renderScene, type SimResult } from '../../core/simulate/render.ts';
import { parseScene, type SceneInput } from '../../core/simulate/scene.ts';

const QUIET = { sky: { level: 0 }, noise: { readNoiseE: 0, biasAdu: 0, gain: 1, shotNoise: false }, quantize: false };

/** Unweighted centroid and second moments in a box, minus the 1-px box variance 1/12 (optics.md §1.6). */
function moments(r: SimResult, cx: number, cy: number, half: number) {
  let s = 0, sx = 0, sy = 0;
  const x0 = Math.max(0, Math.round(cx) - half), x1 = Math.min(r.width - 1, Math.round(cx) + half);
  const y0 = Math.max(0, Math.round(cy) - half), y1 = Math.min(r.height - 1, Math.round(cy) + half);
  for (let y = y0; y <= y1; y++) for (let x = x0; x <= x1; x++) { const v = r.data[y * r.width + x]; s += v; sx += v * x; sy += v * y; }
  const mx = sx / s, my = sy / s;
  let xx = 0, yy = 0, xy = 0;
  for (let y = y0; y <= y1; y++) for (let x = x0; x <= x1; x++) {
    const v = r.data[y * r.width + x];
    xx += v * (x - mx) ** 2; yy += v * (y - my) ** 2; xy += v * (x - mx) * (y - my);
  }
  return { flux: s, x: mx, y: my, xx: xx / s - 1 / 12, yy: yy / s - 1 / 12, xy: xy / s };
}

function opticsScene(extra: SceneInput & { psf?: SceneInput['psf'] }): SimResult {
  return renderScene(parseScene({ ...QUIET, optics: { pixelSizeUm: 3.76, focalLengthMm: 300, fNumber: 4 }, ...extra }));
}

/** optics.md §4: |δ| = 1.6986 N p sqrt(FWHM² - FWHM0²) / sqrt(1 + ε²), FWHM from moments (2.3548 σ). */
function defocusFromFwhm(fwhm: number, fwhm0: number, N: number, p: number): number {
  return 1.6986 * N * p * Math.sqrt(fwhm * fwhm - fwhm0 * fwhm0);
}

describe('optics renderer', () => {
  it('reproduces the optics.md §4 worked example: N = 4, p = 3.76 µm, 2.5 px seeing, δ = 62.6 µm gives 3.5 px', () => {
    const r = opticsScene({
      width: 128, height: 128, stars: [{ x: 63.7, y: 64.2, fluxE: 2e6 }],
      psf: { kind: 'optics', seeing: { model: 'gaussian', fwhmPx: 2.5 }, aberrations: { defocusCenterUm: 62.6 } },
    });
    const m = moments(r, 63.7, 64.2, 40);
    const fwhm = 2.354820045 * Math.sqrt((m.xx + m.yy) / 2);
    expect(fwhm).toBeCloseTo(3.5, 2);
    expect(r.truth.stars[0].defocusUm).toBe(62.6);
    expect(m.flux).toBe(2e6); // shot noise off: exactly round(fluxE) photons, all inside
  });

  it('tilt: the focus read back from blur with the §4 formula changes by tiltX x (distance / width)', () => {
    const W = 1000, H = 600;
    const r = opticsScene({
      width: W, height: H,
      stars: [{ x: 100, y: 299.5, fluxE: 2e6 }, { x: 900, y: 299.5, fluxE: 2e6 }],
      psf: { kind: 'optics', seeing: { fwhmPx: 2.0 }, aberrations: { defocusCenterUm: 50, tiltXUmAcross: 60 } },
    });
    const d = [100, 900].map((x) => {
      const m = moments(r, x, 299.5, 45);
      return defocusFromFwhm(2.354820045 * Math.sqrt((m.xx + m.yy) / 2), 2.0, 4, 3.76);
    });
    const expectDelta = (x: number) => 50 + (60 * (x - (W - 1) / 2)) / W;
    expect(d[0] / expectDelta(100)).toBeCloseTo(1, 1);
    expect(Math.abs(d[1] / expectDelta(900) - 1)).toBeLessThan(0.01);
    expect(Math.abs(d[1] - d[0] - (60 * 800) / W)).toBeLessThan(1.0);
    const tilt = r.truth.global.tilt as { acrossFrameUm: { x: number; y: number }; focusErrorAcrossUm: { x: number; y: number }; mrad: number; axisDeg: number };
    // The right star lies farther behind focus (measured above), so it focuses with the sensor
    // nearer the lens: best focus changes by minus the focus error across the frame (DESIGN.md).
    expect(tilt.focusErrorAcrossUm).toEqual({ x: 60, y: 0 });
    expect(tilt.acrossFrameUm).toEqual({ x: -60, y: 0 });
    expect(tilt.mrad).toBeCloseTo(60 / (W * 3.76e-3), 12); // µm/mm = mrad (optics.md §4)
    expect(tilt.axisDeg).toBe(0);
  });

  it('coma: the truth centroid is the measured one, S(1+ε²) beyond the Gaussian image point', () => {
    const r = opticsScene({
      width: 2000, height: 1400,
      stars: [{ x: 1850.3, y: 1250.8, fluxE: 1e6 }],
      psf: { kind: 'optics', seeing: { fwhmPx: 2.0 }, aberrations: { comaUmPerMm: 6 } },
    });
    const t = r.truth.stars[0];
    const m = moments(r, t.x, t.y, 40);
    expect(Math.abs(m.x - t.x)).toBeLessThan(0.01);
    expect(Math.abs(m.y - t.y)).toBeLessThan(0.01);
    // S = 6 µm/mm x h; h from the frame centre in mm; outward tail.
    const hx = (1850.3 - 999.5) * 3.76e-3, hy = (1250.8 - 699.5) * 3.76e-3;
    const S = (6 * Math.hypot(hx, hy)) / 3.76;
    expect(t.comaSagittalPx).toBeCloseTo(S, 9);
    expect(Math.hypot(t.x - t.xNominal, t.y - t.yNominal)).toBeCloseTo(S, 9);
    expect(t.comaTailAngleDeg).toBeCloseTo((Math.atan2(hy, hx) * 180) / Math.PI, 9);
    expect((r.truth.global.coma as { tail: string }).tail).toBe('outward');
  });

  it('spacing error: + and - give opposite radial-minus-tangential corner patterns (§5 metric, invented model)', () => {
    // A 15 x 10.5 mm sensor; corner stars at h = 8.4 mm.
    const corners = [[150, 150], [3850, 150], [150, 2650], [3850, 2650]];
    const D = (s: number) => {
      const r = opticsScene({
        width: 4000, height: 2800, stars: corners.map(([x, y]) => ({ x, y, fluxE: 5e5 })),
        psf: { kind: 'optics', seeing: { fwhmPx: 2.0 }, aberrations: { spacingErrorMm: s } },
      });
      let sum = 0;
      for (const [x, y] of corners) {
        const m = moments(r, x, y, 40);
        const phi = Math.atan2(y - 1399.5, x - 1999.5);
        sum += (m.xx - m.yy) * Math.cos(2 * phi) + 2 * m.xy * Math.sin(2 * phi); // optics.md §5 step 2
      }
      return { D: sum / 4, r };
    };
    const plus = D(1.5), minus = D(-1.5);
    expect(plus.D).toBeGreaterThan(0.3);
    expect(minus.D).toBeLessThan(-0.3);
    expect((plus.r.truth.global.spacing as { expectedPattern: string }).expectedPattern).toBe('radial');
    expect((minus.r.truth.global.spacing as { expectedPattern: string }).expectedPattern).toBe('tangential');
    expect((plus.r.truth.global.corners as { pattern: string; stars: number })).toMatchObject({ pattern: 'radial', stars: 4 });
    expect((minus.r.truth.global.corners as { pattern: string }).pattern).toBe('tangential');
    // The truth's own D for the defocus/astigmatism part matches the measurement (seeing cancels in D, §5).
    const truthD = plus.r.truth.stars.reduce((a, s) => a + s.astigRadialMinusTangentialPx2!, 0) / 4;
    expect(plus.D / truthD).toBeCloseTo(1, 1);
  });

  it('trailing adds L²/12 along the trail only (rank-1, optics.md §6)', () => {
    const base = { width: 200, height: 200, stars: [{ x: 100, y: 100, fluxE: 1e6 }] };
    const seeingOnly = opticsScene({ ...base, psf: { kind: 'optics', seeing: { fwhmPx: 2.5 } } });
    const trailed = opticsScene({ ...base, psf: { kind: 'optics', seeing: { fwhmPx: 2.5 }, trailing: { lengthPx: 12, angleDeg: 30 } } });
    const a = moments(seeingOnly, 100, 100, 40), b = moments(trailed, 100, 100, 40);
    const t = (30 * Math.PI) / 180;
    const along = (m: typeof a) => m.xx * Math.cos(t) ** 2 + 2 * m.xy * Math.cos(t) * Math.sin(t) + m.yy * Math.sin(t) ** 2;
    const across = (m: typeof a) => m.xx * Math.sin(t) ** 2 - 2 * m.xy * Math.cos(t) * Math.sin(t) + m.yy * Math.cos(t) ** 2;
    expect((along(b) - along(a)) / (144 / 12)).toBeCloseTo(1, 1);
    expect(Math.abs(across(b) - across(a))).toBeLessThan(0.02);
    expect(trailed.truth.stars[0]).toMatchObject({ trailLengthPx: 12 });
    expect(trailed.truth.stars[0].trailAngleDeg).toBeCloseTo(30, 9);
  });

  it('is deterministic per seed', () => {
    const sc = { width: 300, height: 200, seed: 9, stars: { count: 30 }, psf: { kind: 'optics' as const } };
    const a = renderScene(parseScene(sc)), b = renderScene(parseScene(sc));
    const c = renderScene(parseScene({ ...sc, seed: 10 }));
    expect(Buffer.from(a.data.buffer).equals(Buffer.from(b.data.buffer))).toBe(true);
    expect(Buffer.from(a.data.buffer).equals(Buffer.from(c.data.buffer))).toBe(false);
  });
});

describe('frame extras', () => {
  // The next two check the scene's documented definitions (scene.ts), not outside physics.
  it('vignetting dims sky and stars to cornerIllumination at the farthest corner', () => {
    const r = renderScene(parseScene({
      width: 401, height: 301, stars: [{ x: 200, y: 150, fluxE: 1e4 }, { x: 10, y: 10, fluxE: 1e4 }],
      sky: { level: 1000 }, vignetting: { cornerIllumination: 0.6 }, noise: { readNoiseE: 0, biasAdu: 0, shotNoise: false },
    }));
    expect(r.truth.stars[0].vignetting).toBeCloseTo(1, 12);
    // r^2 / r_corner^2 with r_corner^2 = 200^2 + 150^2 (relative illumination 1 - 0.4 r^2/rc^2).
    expect(r.truth.stars[1].vignetting).toBeCloseTo(1 - (0.4 * (190 ** 2 + 140 ** 2)) / (200 ** 2 + 150 ** 2), 12);
    expect(r.truth.stars[1].fluxE).toBeCloseTo(1e4 * r.truth.stars[1].vignetting, 6);
    expect(r.data[0]).toBe(600);
    expect(r.data[150 * 401 + 100]).toBe(Math.round(1000 * (1 - (0.4 * 100 ** 2) / (200 ** 2 + 150 ** 2))));
  });

  it('sky gradients are ADU across the frame, centred', () => {
    const r = renderScene(parseScene({
      width: 101, height: 51, stars: [], sky: { level: 500, gradientX: 100, gradientY: -40 },
      noise: { readNoiseE: 0, biasAdu: 0, shotNoise: false }, quantize: false,
    }));
    expect(r.data[25 * 101 + 50]).toBeCloseTo(500, 4);
    expect(r.data[25 * 101 + 100] - r.data[25 * 101 + 0]).toBeCloseTo((100 * 100) / 101, 3);
    expect(r.data[50 * 101 + 50] - r.data[0 * 101 + 50]).toBeCloseTo((-40 * 50) / 51, 3);
  });

  it('hot pixels and cosmic rays are in the frame and in the truth; header cards carry the optics', () => {
    const r = renderScene(parseScene({
      width: 300, height: 200, stars: [], hotPixels: { count: 5, minAdu: 5000, maxAdu: 6000 }, cosmicRays: 3,
      noise: { readNoiseE: 2, biasAdu: 300 }, sky: { level: 100 },
    }));
    const hot = r.truth.global.hotPixels as { x: number; y: number; adu: number }[];
    expect(hot).toHaveLength(5);
    for (const h of hot) expect(r.data[h.y * 300 + h.x]).toBeGreaterThan(300 + 100 + 4800);
    expect(r.truth.global.cosmicRays as unknown[]).toHaveLength(3);
    const keys = Object.fromEntries(r.cards.map((c) => [c.key, c.value]));
    expect(keys).toMatchObject({ FOCALLEN: 300, XPIXSZ: 3.76, YPIXSZ: 3.76, FOCRATIO: 4, EXPTIME: 60, GAIN: 1, SIMULATE: true });
    for (const c of r.cards) expect(c.key).toMatch(/^[A-Z0-9_-]{1,8}$/);
  });

  it('refuses a photon budget beyond psf.maxPhotons with a usage error', () => {
    expect(() => renderScene(parseScene({ stars: [{ x: 5, y: 5, fluxE: 1e9 }], psf: { kind: 'optics', maxPhotons: 1e8 } })))
      .toThrow(/^scene: the stars hold/);
  });
});
