/**
 * Spherical aberration in the ray generator, checked by Monte Carlo against textbook geometry:
 * optics.md §3 (ε = -2N ∂W/∂ρ; the table of aperture scaling: spherical blur ∝ 1/N^3),
 * Smith, *Modern Optical Engineering* (transverse spherical = longitudinal x tan U', so
 * LSA = 2N x TSA for a slow beam; least-confusion circle at 3/4 of the LSA from the paraxial
 * focus with diameter TSA/2 [MEM]), and the star-test appearance of under-correction
 * (Suiter, *Star Testing Astronomical Telescopes*: inside focus a bright outer ring, outside
 * focus a soft edge and a brighter centre [MEM]).
 */
import { describe, expect, it } from 'vitest';
import { Rng } from '../../core/simulate/prng.ts';
import { effectiveSphericalUm, emptyRayModel, geometricMoments, localOptics, opticsField, sampleOffsets, type RayModel } from '../../core/simulate/psf-optics.ts';
import { parseScene, type OpticsPsf } from '../../core/simulate/scene.ts';
import { renderScene } from '../../core/simulate/render.ts';

const N_RAYS = 200_000;

function draw(m: RayModel, n = N_RAYS, seed = 3) {
  const x = new Float64Array(n), y = new Float64Array(n);
  sampleOffsets(m, new Rng(seed), n, x, y);
  return { x, y };
}

/** A one-star scene's ray model at the optical centre, in pixels of pUm. */
function rayModel(o: { N: number; pUm: number; L: number; defocusUm: number; refN?: number; eps?: number }): RayModel {
  const scene = parseScene({
    width: 64, height: 64, optics: { fNumber: o.N, pixelSizeUm: o.pUm, obstruction: o.eps ?? 0 },
    stars: [{ x: 31.5, y: 31.5, fluxE: 1 }],
    psf: { kind: 'optics', seeing: { fwhmPx: 0 }, aberrations: { sphericalUm: o.L, sphericalFNumber: o.refN ?? null, defocusCenterUm: o.defocusUm } },
  });
  const psf = scene.psf as OpticsPsf;
  return localOptics(opticsField(scene, psf), 31.5, 31.5).rays;
}

function maxRadius(d: { x: Float64Array; y: Float64Array }): number {
  let m = 0;
  for (let i = 0; i < d.x.length; i++) m = Math.max(m, Math.hypot(d.x[i], d.y[i]));
  return m;
}

describe('longitudinal and transverse spherical aberration (LSA = 2N x TSA)', () => {
  const N = 4, p = 2, L = -60; // under-corrected by 60 um at f/4, 2 um pixels

  it('at the paraxial focus the marginal rays miss by LSA/(2N)', () => {
    const d = draw(rayModel({ N, pUm: p, L, defocusUm: 0 }));
    // TSA = |L| / (2N) = 7.5 um = 3.75 px; the outermost sampled zone is within 1e-4 of the rim.
    expect(maxRadius(d) * p).toBeCloseTo(Math.abs(L) / (2 * N), 2);
  });

  it('zone ρ crosses the axis L ρ^2 from the paraxial focus (sign: under-corrected = marginal focus nearer the lens)', () => {
    // Focus errors are positive for a sensor behind focus (farther from the lens), so the
    // marginal focus of an under-corrected beam lies at a negative position. Each ray's pupil
    // point comes from the same random draws through a pure unit-defocus model (offset = P).
    const n = 100_000;
    const unit = emptyRayModel();
    unit.sagPx = 1; unit.tanPx = 1;
    const P = draw(unit, n, 7);
    const tsaPx = Math.abs(L) / (2 * N) / p;
    for (const zone of [1, 0.5, 0.1]) {
      const d = draw(rayModel({ N, pUm: p, L, defocusUm: zone * L }), n, 7);
      let worst = 0, rays = 0;
      for (let i = 0; i < n; i++) {
        const u = P.x[i] * P.x[i] + P.y[i] * P.y[i];
        if (Math.abs(u - zone) > 0.002) continue;
        rays++;
        worst = Math.max(worst, Math.hypot(d.x[i], d.y[i]));
      }
      expect(rays).toBeGreaterThan(50);
      // Within |Δu| <= 0.002 of the zone the miss is |L| |Δu| sqrt(u) / 2N <= 0.002 TSA.
      expect(worst).toBeLessThan(0.0021 * tsaPx);
    }
  });

  it('the smallest circle holding every ray lies at 3/4 LSA with diameter TSA/2 (Smith [MEM])', () => {
    const tsaPx = Math.abs(L) / (2 * N) / p;
    let best = { f: NaN, r: Infinity };
    for (let f = 0.5; f <= 1.0001; f += 0.05) {
      const r = maxRadius(draw(rayModel({ N, pUm: p, L, defocusUm: f * L }), 60_000));
      if (r < best.r) best = { f, r };
    }
    expect(best.f).toBeCloseTo(0.75, 5);
    expect(Math.abs((2 * best.r) / (tsaPx / 2) - 1)).toBeLessThan(0.01);
  });

  it('the exact moments match the rays with defocus, astigmatism, spherical and an obstruction; smallest rms at 2L/3 unobstructed', () => {
    const m = emptyRayModel();
    m.obstruction = 0.3;
    m.sagPx = -1.2; m.tanPx = 0.7; m.radialX = Math.cos(0.4); m.radialY = Math.sin(0.4);
    m.sphericalPx = 2.5;
    const d = draw(m, 400_000, 11);
    let xx = 0, yy = 0, xy = 0, mx = 0, my = 0;
    const n = d.x.length;
    for (let i = 0; i < n; i++) { mx += d.x[i]; my += d.y[i]; }
    mx /= n; my /= n;
    for (let i = 0; i < n; i++) { const a = d.x[i] - mx, b = d.y[i] - my; xx += a * a; yy += b * b; xy += a * b; }
    const g = geometricMoments(m);
    expect(Math.abs(xx / n / g.xx - 1)).toBeLessThan(0.01);
    expect(Math.abs(yy / n / g.yy - 1)).toBeLessThan(0.01);
    expect(Math.abs(xy / n - g.xy)).toBeLessThan(0.01 * Math.sqrt(g.xx * g.yy));
    // Per-axis variance (E[(δ - L u) ^2 u] / 8N^2) is smallest at δ = 2L/3 without obstruction.
    const v = (f: number) => geometricMoments(rayModel({ N, pUm: p, L, defocusUm: f * L })).xx;
    expect(v(2 / 3)).toBeLessThan(v(0.62));
    expect(v(2 / 3)).toBeLessThan(v(0.72));
  });

  it('stopping down from f/4 to f/8 scales the LSA by (4/8)^2 and the transverse blur by (4/8)^3 (optics.md §3 table)', () => {
    expect(effectiveSphericalUm(L, 4, 8)).toBeCloseTo(L / 4, 12);
    const wide = maxRadius(draw(rayModel({ N: 4, pUm: p, L, defocusUm: 0, refN: 4 })));
    const stopped = maxRadius(draw(rayModel({ N: 8, pUm: p, L, defocusUm: 0, refN: 4 })));
    expect(Math.abs(stopped / wide / 0.125 - 1)).toBeLessThan(0.005);
  });
});

describe('star-test appearance (Suiter [MEM])', () => {
  /** Fraction of rays beyond 80 % of the spot's outermost radius: the rim's share of the light. */
  function rimShare(defocusUm: number, L: number): number {
    const d = draw(rayModel({ N: 4, pUm: 2, L, defocusUm }), 100_000);
    const R = maxRadius(d);
    let k = 0;
    for (let i = 0; i < d.x.length; i++) if (Math.hypot(d.x[i], d.y[i]) > 0.8 * R) k++;
    return k / d.x.length;
  }

  it('under-corrected: a bright rim inside focus, a soft edge outside; over-corrected: the reverse; none: alike', () => {
    // Discs 100 um either side of the least-confusion focus (3L/4 from the paraxial focus).
    const uniform = 1 - 0.8 * 0.8; // a uniform disc puts 36 % of its light in the outer 20 % of the radius
    const under = { inside: rimShare(-0.75 * 60 - 100, -60), outside: rimShare(-0.75 * 60 + 100, -60) };
    const over = { inside: rimShare(0.75 * 60 - 100, 60), outside: rimShare(0.75 * 60 + 100, 60) };
    expect(under.inside).toBeGreaterThan(uniform + 0.05);
    expect(under.outside).toBeLessThan(uniform - 0.05);
    expect(over.inside).toBeLessThan(uniform - 0.05);
    expect(over.outside).toBeGreaterThan(uniform + 0.05);
    expect(Math.abs(rimShare(-100, 0) - uniform)).toBeLessThan(0.01);
    expect(Math.abs(rimShare(100, 0) - uniform)).toBeLessThan(0.01);
  });
});

describe('the render truth', () => {
  it('states the spherical aberration it rendered and where its foci lie', () => {
    const r = renderScene(parseScene({
      width: 64, height: 64, optics: { fNumber: 5, pixelSizeUm: 3 }, stars: [{ x: 32, y: 32, fluxE: 1000 }],
      psf: { kind: 'optics', aberrations: { sphericalUm: 40, sphericalFNumber: 4 } },
    }));
    const s = r.truth.global.spherical as Record<string, number | string>;
    expect(s.longitudinalUm).toBeCloseTo(40 * (4 / 5) ** 2, 10);
    expect(s.kind).toBe('over-corrected');
    expect(s.transverseUm).toBeCloseTo((40 * 0.64) / 10, 10);
    expect(s.minimumRmsFocusUm).toBeCloseTo((2 / 3) * 40 * 0.64, 10);
  });
});
