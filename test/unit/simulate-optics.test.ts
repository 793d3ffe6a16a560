/**
 * Monte Carlo checks of the ray generator against optics.md §1.1, §1.5, §3, §6 check values.
 * (optics.md = /work/shared/reference/optics.md, the project's formula reference.)
 */
import { describe, expect, it } from 'vitest';
import { Rng } from '../../core/simulate/prng.ts';
import {
  emptyRayModel, geometricMoments, localOptics, moffatAlpha, opticsField, sampleOffsets,
  SEEING_GAUSSIAN, SEEING_MOFFAT, type RayModel,
} from '../../core/simulate/psf-optics.ts';
import { parseScene, type OpticsPsf } from '../../core/simulate/scene.ts';

const N = 300_000;

/** |actual/expected - 1| < tol; tolerances are ~5 standard errors of the Monte Carlo estimate. */
function expectRel(actual: number, expected: number, tol: number): void {
  expect(Math.abs(actual / expected - 1)).toBeLessThan(tol);
}

function draw(m: RayModel, seed = 5, n = N): { x: Float64Array; y: Float64Array } {
  const x = new Float64Array(n), y = new Float64Array(n);
  sampleOffsets(m, new Rng(seed), n, x, y);
  return { x, y };
}

/** Mean and covariance of offsets projected on (u, v) = (cos a, sin a), (-sin a, cos a). */
function momentsIn(x: Float64Array, y: Float64Array, angleRad: number) {
  const c = Math.cos(angleRad), s = Math.sin(angleRad);
  const n = x.length;
  let mu = 0, mv = 0;
  for (let i = 0; i < n; i++) { mu += x[i] * c + y[i] * s; mv += -x[i] * s + y[i] * c; }
  mu /= n; mv /= n;
  let uu = 0, vv = 0, uv = 0, u3 = 0;
  let s1r = 0, s1i = 0, s3r = 0, s3i = 0;
  for (let i = 0; i < n; i++) {
    const u = x[i] * c + y[i] * s - mu, v = -x[i] * s + y[i] * c - mv;
    uu += u * u; vv += v * v; uv += u * v; u3 += u * u * u;
    const r2 = u * u + v * v;
    s1r += r2 * u; s1i += r2 * v; // <|z|^2 z>
    s3r += u * (u * u - 3 * v * v); s3i += v * (3 * u * u - v * v); // <z^3>
  }
  return { mu, mv, uu: uu / n, vv: vv / n, uv: uv / n, u3: u3 / n, s1r: s1r / n, s1i: s1i / n, s3r: s3r / n, s3i: s3i / n };
}

describe('coma spot (optics.md §1.5 geometric third-order coma, exact results)', () => {
  const S = 3.0;
  const dir = (30 * Math.PI) / 180;
  const m = emptyRayModel();
  m.comaPx = S;
  m.comaDirX = Math.cos(dir);
  m.comaDirY = Math.sin(dir);
  const { x, y } = draw(m);
  const k = momentsIn(x, y, dir);

  it('centroid is offset by S toward the flare, none across', () => {
    expect(k.mu).toBeCloseTo(S, 1);
    expect(Math.abs(k.mu - S)).toBeLessThan(0.005 * S);
    expect(Math.abs(k.mv)).toBeLessThan(0.005 * S);
  });

  it('variances are S^2/2 along and S^2/6 across, uncorrelated', () => {
    expectRel(k.uu, (S * S) / 2, 0.015);
    expectRel(k.vv, (S * S) / 6, 0.015);
    expect(Math.abs(k.uv) / (S * S)).toBeLessThan(0.003);
  });

  it('spin-3 moment is 0 and spin-1 has magnitude S^3/3 pointing toward the flare', () => {
    // optics.md §1.5 gives |spin-1| = S^3/3 "pointing toward the flare" and spin-3 = 0.
    // (Its signed values -S^3/3 and third moment -S^3/4 use an axis from flare to tip: direct
    // integration with u = Sρ²(2 + cos 2ψ) gives E[(u-S)^3] = +S^3/4 along the flare.)
    const S3 = S ** 3;
    expectRel(k.s1r, S3 / 3, 0.03);
    expect(Math.abs(k.s1i) / S3).toBeLessThan(0.005);
    expect(Math.hypot(k.s3r, k.s3i) / S3).toBeLessThan(0.01);
    expectRel(k.u3, S3 / 4, 0.04);
    expectRel(k.u3 / Math.pow(k.uu, 1.5), 1 / Math.SQRT2, 0.04); // |skewness| 0.707
  });

  it('tangential extent is 3S and the spot fills the 60-degree cone (optics.md §3 coma)', () => {
    let maxU = -Infinity, maxHalfAngle = 0;
    const c = Math.cos(dir), s = Math.sin(dir);
    for (let i = 0; i < x.length; i++) {
      const u = x[i] * c + y[i] * s, v = -x[i] * s + y[i] * c;
      if (u > maxU) maxU = u;
      if (u > 1e-9) maxHalfAngle = Math.max(maxHalfAngle, Math.abs(Math.atan2(v, u)));
    }
    expect(maxU / S).toBeGreaterThan(2.99);
    expect(maxU / S).toBeLessThanOrEqual(3 + 1e-9);
    expect((maxHalfAngle * 180) / Math.PI).toBeLessThanOrEqual(30 + 1e-6);
    expect((maxHalfAngle * 180) / Math.PI).toBeGreaterThan(29.5);
  });

  it('the closed-form moments used for the truth agree with the same check values', () => {
    const g = geometricMoments(m);
    const c = Math.cos(dir), s = Math.sin(dir);
    expect(g.meanX).toBeCloseTo(S * c, 12);
    expect(g.meanY).toBeCloseTo(S * s, 12);
    const uu = g.xx * c * c + 2 * g.xy * c * s + g.yy * s * s;
    const vv = g.xx * s * s - 2 * g.xy * c * s + g.yy * c * c;
    expect(uu).toBeCloseTo((S * S) / 2, 10);
    expect(vv).toBeCloseTo((S * S) / 6, 10);
  });
});

describe('defocus disk (optics.md §1.1 uniform disk, §3 d = δ/N)', () => {
  for (const eps of [0, 0.4]) {
    it(`per-axis second moment is d^2 (1 + ε^2)/16 and the disk diameter is |δ|/N (ε = ${eps})`, () => {
      const scene = parseScene({
        width: 1000, height: 1000,
        optics: { pixelSizeUm: 3.76, fNumber: 4, obstruction: eps },
        psf: { kind: 'optics', seeing: { fwhmPx: 0 }, aberrations: { defocusCenterUm: 100 } },
      });
      const f = opticsField(scene, scene.psf as OpticsPsf);
      const lo = localOptics(f, 499.5, 499.5);
      const d = 100 / 4 / 3.76; // px
      expect(lo.defocusDiskPx).toBeCloseTo(d, 12);
      const { x, y } = draw(lo.rays);
      const k = momentsIn(x, y, 0);
      const expected = (d * d * (1 + eps * eps)) / 16;
      expectRel(k.uu, expected, 0.02);
      expectRel(k.vv, expected, 0.02);
      let rmax = 0, rmin = Infinity;
      for (let i = 0; i < x.length; i++) { const r = Math.hypot(x[i], y[i]); rmax = Math.max(rmax, r); rmin = Math.min(rmin, r); }
      expect(rmax).toBeLessThanOrEqual(d / 2 + 1e-9);
      expect(rmax).toBeGreaterThan(0.999 * (d / 2));
      expect(rmin).toBeGreaterThanOrEqual(eps * (d / 2) - 1e-9);
    });
  }
});

describe('focus field (optics.md §3 field curvature, §4 tilt plane)', () => {
  it('curvature gives δ = h²/(2R) and tilt adds t·x with t = across / width', () => {
    const scene = parseScene({
      width: 4000, height: 3000, optics: { pixelSizeUm: 5 },
      psf: { kind: 'optics', aberrations: { curvatureRadiusMm: 500, tiltXUmAcross: 40, tiltYUmAcross: -30, defocusCenterUm: 7, opticalCenterPx: { x: 1900, y: 1600 } } },
    });
    const f = opticsField(scene, scene.psf as OpticsPsf);
    const x = 1900 + 1200, y = 1600 - 700; // 6 mm, -3.5 mm from the optical centre
    const hx = 6, hy = -3.5;
    const lo = localOptics(f, x, y);
    // h^2/(2R) in mm -> µm: 1000 h^2 / (2R).
    const expected = 7 + (40 / 20) * hx + (-30 / 15) * hy + (1000 * (hx * hx + hy * hy)) / (2 * 500);
    expect(lo.defocusUm).toBeCloseTo(expected, 9);
    expect(lo.radiusMm).toBeCloseTo(Math.hypot(hx, hy), 12);
    expect(lo.positionAngleDeg).toBeCloseTo((Math.atan2(hy, hx) * 180) / Math.PI, 9);
  });
});

describe('astigmatism (optics.md §3: line foci and I_rad - I_tan)', () => {
  // Star at 30 degrees position angle, h = 12 mm; k = 0.5 µm/mm^2 -> Δz = 72 µm.
  const p = 3.76, Nf = 4, k = 0.5;
  const h = 12, phi = (30 * Math.PI) / 180;
  const cx = 999.5, cy = 999.5;
  const sx = cx + (h / (p / 1000)) * Math.cos(phi), sy = cy + (h / (p / 1000)) * Math.sin(phi);
  const dz = k * h * h;
  const at = (defocusCenterUm: number) => {
    const scene = parseScene({
      width: 2000, height: 2000, optics: { pixelSizeUm: p, fNumber: Nf },
      psf: { kind: 'optics', seeing: { fwhmPx: 0 }, aberrations: { defocusCenterUm, astigmatismUmPerMm2: k } },
    });
    return localOptics(opticsField(scene, scene.psf as OpticsPsf), sx, sy);
  };

  it('sensor on the sagittal surface: a radial line of length Δz/N', () => {
    const lo = at(dz / 2); // medial δ = Δz/2 puts the sensor on the sagittal focus (δ_s = 0)
    expect(lo.defocusSagittalUm).toBeCloseTo(0, 9);
    const { x, y } = draw(lo.rays, 9, 100_000);
    const m = momentsIn(x, y, phi);
    expect(m.vv).toBeLessThan(1e-20);
    // Uniform-disk projection: per-axis variance (length/2)^2/4.
    const L = dz / Nf / p;
    expectRel(m.uu, (L / 2) ** 2 / 4, 0.02);
  });

  it('sensor on the tangential surface: a line perpendicular to the radius', () => {
    const lo = at(-dz / 2);
    expect(lo.defocusTangentialUm).toBeCloseTo(0, 9);
    const { x, y } = draw(lo.rays, 10, 100_000);
    const m = momentsIn(x, y, phi);
    expect(m.uu).toBeLessThan(1e-20);
    expectRel(m.vv, (dz / Nf / p / 2) ** 2 / 4, 0.02);
  });

  it('medial surface: a round spot of diameter Δz/(2N)', () => {
    const lo = at(0);
    const { x, y } = draw(lo.rays, 11, 100_000);
    const m = momentsIn(x, y, phi);
    const d = dz / (2 * Nf) / p;
    expectRel(m.uu, d * d / 16, 0.02);
    expectRel(m.vv, d * d / 16, 0.02);
    let rmax = 0;
    for (let i = 0; i < x.length; i++) rmax = Math.max(rmax, Math.hypot(x[i], y[i]));
    expect(rmax).toBeLessThanOrEqual(d / 2 + 1e-9);
  });

  it('I_rad - I_tan = 4N^2 W222 (2 W020 + W222), linear in focus, sign flip at the medial focus', () => {
    for (const d0 of [-60, -20, 0, 25, 80]) {
      const lo = at(d0);
      const { x, y } = draw(lo.rays, 12, 100_000);
      const m = momentsIn(x, y, phi);
      // W020 = δ_s/(8N^2) (defocus measured from the sagittal surface), W222 H^2 = Δz/(8N^2); µm -> px.
      const W020 = lo.defocusSagittalUm / (8 * Nf * Nf), W222 = dz / (8 * Nf * Nf);
      const D = (4 * Nf * Nf * W222 * (2 * W020 + W222)) / (p * p);
      expect(m.uu - m.vv).toBeCloseTo(D, 0);
      expect(Math.abs(m.uu - m.vv - D)).toBeLessThan(0.01 * (m.uu + m.vv) + 1e-9);
      expect(Math.sign(D)).toBe(Math.sign(d0));
    }
  });
});

describe('seeing samplers', () => {
  it('Moffat FWHM/α matches optics.md §8 (formula as in astropy Moffat2D.fwhm)', () => {
    const table: [number, number][] = [[2.5, 1.130501], [3, 1.019649], [4, 0.869959], [4.765, 0.791401]];
    for (const [beta, ratio] of table) expect(1 / moffatAlpha(1, beta)).toBeCloseTo(ratio, 6);
  });

  for (const beta of [1.5, 2.5, 4.765]) {
    it(`Moffat radii follow F(<r) = 1 - (1 + r^2/α^2)^(1-β) (Trujillo et al. 2001), β = ${beta}`, () => {
      const m = emptyRayModel();
      m.seeing = SEEING_MOFFAT;
      m.seeingBeta = beta;
      m.seeingAlphaPx = 2.0;
      const { x, y } = draw(m, 21);
      for (const r of [0.5, 1, 2, 4, 8]) {
        let inside = 0;
        for (let i = 0; i < x.length; i++) if (x[i] * x[i] + y[i] * y[i] < r * r) inside++;
        const F = 1 - Math.pow(1 + (r * r) / 4, 1 - beta);
        expect(Math.abs(inside / x.length - F)).toBeLessThan(5 * Math.sqrt((F * (1 - F)) / x.length) + 1e-5);
      }
      // Isotropy: no preferred direction.
      let sx = 0, sy = 0;
      for (let i = 0; i < x.length; i++) { const r = Math.hypot(x[i], y[i]); sx += x[i] / r; sy += y[i] / r; }
      expect(Math.hypot(sx, sy) / x.length).toBeLessThan(5 / Math.sqrt(x.length));
    });
  }

  it('Gaussian seeing has per-axis variance (FWHM / 2.354820045)^2', () => {
    const fwhm = 3.2;
    const m = emptyRayModel();
    m.seeing = SEEING_GAUSSIAN;
    m.seeingSigmaPx = fwhm / (2 * Math.sqrt(2 * Math.LN2));
    const { x, y } = draw(m, 22);
    const k = momentsIn(x, y, 0);
    const s2 = (fwhm / 2.354820045) ** 2;
    expectRel(k.uu, s2, 0.02);
    expectRel(k.vv, s2, 0.02);
  });
});

describe('trailing and field rotation (optics.md §6)', () => {
  it('a linear trail adds the uniform-segment variance L^2/12 along its direction only', () => {
    const L = 20, a = (40 * Math.PI) / 180;
    const m = emptyRayModel();
    m.trailX = L * Math.cos(a);
    m.trailY = L * Math.sin(a);
    const { x, y } = draw(m, 23);
    const k = momentsIn(x, y, a);
    expectRel(k.uu, (L * L) / 12, 0.02);
    expect(k.vv).toBeLessThan(1e-18);
    expect(Math.abs(k.mu)).toBeLessThan(0.05);
    const g = geometricMoments(m);
    expect(g.xx + g.yy).toBeCloseTo((L * L) / 12, 6);
  });

  it('field rotation draws a tangential arc of length ωt r about the centre', () => {
    const r = 1500, A = 0.01; // arc 15 px
    const m = emptyRayModel();
    m.rotAngle = A;
    m.rotArmX = r; // star on +x from the rotation centre: tangential = y
    m.rotArmY = 0;
    const { x, y } = draw(m, 24);
    const k = momentsIn(x, y, 0);
    // Uniform angle on [-A/2, A/2]: E[cos] = sin(A/2)/(A/2), Var(r sin) = r^2 (1/2 - sin A/(2A)).
    expect(k.mu).toBeCloseTo(r * (Math.sin(A / 2) / (A / 2) - 1), 4);
    expectRel(k.vv, r * r * (0.5 - Math.sin(A) / (2 * A)), 0.02);
    expectRel(k.vv, (r * A) ** 2 / 12, 0.02); // small-angle: L^2/12
    let worst = 0;
    for (let i = 0; i < x.length; i++) worst = Math.max(worst, Math.abs(Math.hypot(r + x[i], y[i]) - r));
    expect(worst).toBeLessThan(1e-9); // on the circle
    const g = geometricMoments(m);
    expect(g.meanX).toBeCloseTo(r * (Math.sin(A / 2) / (A / 2) - 1), 6);
    expect(g.yy).toBeCloseTo(r * r * (0.5 - Math.sin(A) / (2 * A)), 4);
  });
});
