import { describe, expect, it } from 'vitest';
import { clippedMean, madSigma, median, medianWithErr, rng, gauss, axisDeg, axisDiffDeg } from '../../core/field/stats.ts';
import { choleskyInverse, levenbergMarquardt, medianOf, robustLinearFit, weightedSolve } from '../../core/field/lsq.ts';

describe('robust statistics', () => {
  it('MAD scaled by 1.4826 estimates a normal sigma (1.4826 = 1/Phi^-1(3/4), the normal-consistency constant)', () => {
    const r = rng(1);
    const v = Float64Array.from({ length: 20000 }, () => 3 + 2 * gauss(r));
    expect(madSigma(v)).toBeCloseTo(2, 1);
    expect(median(v)).toBeCloseTo(3, 1);
  });

  it('median standard error is sqrt(pi/2) sigma/sqrt(n) for normal data (large-sample result)', () => {
    const r = rng(2);
    const meds: number[] = [];
    let errSum = 0;
    for (let k = 0; k < 400; k++) {
      const m = medianWithErr(Float64Array.from({ length: 101 }, () => gauss(r)));
      meds.push(m.value);
      errSum += m.err;
    }
    const mu = meds.reduce((s, v) => s + v, 0) / meds.length;
    const sd = Math.sqrt(meds.reduce((s, v) => s + (v - mu) ** 2, 0) / (meds.length - 1));
    // Expected sqrt(pi/2)/sqrt(101) = 0.1247; the sample sd of 400 medians has ~3.5 % error.
    expect(sd).toBeGreaterThan(0.1247 * 0.88);
    expect(sd).toBeLessThan(0.1247 * 1.12);
    expect(errSum / 400).toBeGreaterThan(0.1247 * 0.9);
    expect(errSum / 400).toBeLessThan(0.1247 * 1.1);
  });

  it('clipped mean ignores gross outliers and gives std/sqrt(n)', () => {
    const r = rng(3);
    const v = Array.from({ length: 500 }, () => 10 + gauss(r));
    for (let k = 0; k < 20; k++) v.push(1000);
    const m = clippedMean(v);
    expect(m.mean).toBeCloseTo(10, 1);
    expect(m.n).toBeLessThanOrEqual(500);
    expect(m.err).toBeCloseTo(m.std / Math.sqrt(m.n), 10);
  });

  it('quickselect median equals the sorted-array median', () => {
    const r = rng(4);
    for (let t = 0; t < 200; t++) {
      const n = 1 + Math.floor(r() * 60);
      const a = Float64Array.from({ length: n }, () => Math.floor(r() * 8));
      const s = Array.from(a).sort((x, y) => x - y);
      const expected = n % 2 ? s[(n - 1) / 2] : 0.5 * (s[n / 2 - 1] + s[n / 2]);
      expect(medianOf(a)).toBe(expected);
    }
  });

  it('axis arithmetic works mod 180', () => {
    expect(axisDeg(135)).toBe(-45);
    expect(axisDeg(-90)).toBe(90);
    expect(axisDiffDeg(89, -89)).toBeCloseTo(2, 10);
  });
});

describe('least squares', () => {
  it('Cholesky inverse times the matrix is the identity', () => {
    const M = new Float64Array([4, 2, 0.6, 2, 5, 1, 0.6, 1, 3]);
    const inv = choleskyInverse(M, 3)!;
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) {
      let s = 0;
      for (let k = 0; k < 3; k++) s += M[i * 3 + k] * inv[k * 3 + j];
      expect(s).toBeCloseTo(i === j ? 1 : 0, 12);
    }
    expect(choleskyInverse(new Float64Array([1, 2, 2, 1]), 2)).toBeNull();
  });

  it('weighted straight line matches the closed-form weighted regression (Bevington & Robinson, Data Reduction, ch. 6)', () => {
    const x = [0, 1, 2, 3, 4, 5];
    const y = [1.1, 2.9, 5.2, 7.1, 8.8, 11.2];
    const s = [0.1, 0.2, 0.1, 0.3, 0.2, 0.1];
    const A = new Float64Array(x.flatMap((v) => [1, v]));
    const w = Float64Array.from(s, (v) => 1 / (v * v));
    const sol = weightedSolve(A, Float64Array.from(y), w, 2)!;
    // Closed form: Delta = S Sxx - Sx^2, a = (Sxx Sy - Sx Sxy)/Delta, b = (S Sxy - Sx Sy)/Delta.
    let S = 0, Sx = 0, Sy = 0, Sxx = 0, Sxy = 0;
    x.forEach((xi, i) => { S += w[i]; Sx += w[i] * xi; Sy += w[i] * y[i]; Sxx += w[i] * xi * xi; Sxy += w[i] * xi * y[i]; });
    const D = S * Sxx - Sx * Sx;
    expect(sol.coef[0]).toBeCloseTo((Sxx * Sy - Sx * Sxy) / D, 10);
    expect(sol.coef[1]).toBeCloseTo((S * Sxy - Sx * Sy) / D, 10);
    expect(sol.covUnit[3]).toBeCloseTo(S / D, 10); // var(b) = S / Delta
  });

  it('robust fit resists outliers and scales errors to the scatter', () => {
    const r = rng(5);
    const n = 400;
    const A = new Float64Array(2 * n);
    const y = new Float64Array(n);
    const sig = new Float64Array(n).fill(0.1);
    for (let i = 0; i < n; i++) {
      const x = i / n;
      A[2 * i] = 1; A[2 * i + 1] = x;
      y[i] = 2 + 3 * x + 0.3 * gauss(r) + (i % 25 === 0 ? 20 : 0);
    }
    const f = robustLinearFit(A, y, sig, 2)!;
    expect(f.coef[0]).toBeCloseTo(2, 1);
    expect(f.coef[1]).toBeCloseTo(3, 1);
    // Intrinsic scatter ~ sqrt(0.3^2 - 0) beyond the stated 0.1: found ~0.28.
    expect(f.scatter).toBeGreaterThan(0.2);
    expect(f.scatter).toBeLessThan(0.4);
  });

  it('Levenberg-Marquardt recovers an exponential decay', () => {
    const t = Array.from({ length: 40 }, (_, i) => i * 0.25);
    const y = Float64Array.from(t, (ti) => 5 * Math.exp(-0.7 * ti) + 0.5);
    const res = levenbergMarquardt({
      n: t.length, y, w: new Float64Array(t.length).fill(1),
      model(p, i, jac) {
        const e = Math.exp(-p[1] * t[i]);
        if (jac) { jac[0] = e; jac[1] = -p[0] * t[i] * e; jac[2] = 1; }
        return p[0] * e + p[2];
      },
    }, [1, 0.2, 0]);
    expect(res.params[0]).toBeCloseTo(5, 6);
    expect(res.params[1]).toBeCloseTo(0.7, 6);
    expect(res.params[2]).toBeCloseTo(0.5, 6);
  });
});
