// The engine's WebAssembly kernels: each committed module must be what its AssemblyScript
// source compiles to (asc from the registry's assemblyscript package), and the sky and filter
// kernels must give exactly the results of their TypeScript references (clippedStats in
// core/image/stats.ts, convolveBandJs in core/image/convolve.ts), the half-flux diameter those
// of halfFluxDiameterWithErrorJs and the adaptive moments those of adaptiveMomentsJs to rounding
// (their exp, asin and sqrt are the module's own).
// The PSF fit's equivalence is in stars-psf-fit-wasm.test.ts, the per-star kernel's in
// stars-measure-wasm.test.ts.
import { describe, it, expect } from 'vitest';
import { clippedStats } from '../../core/image/stats.ts';
import { convolveBand, convolveBandJs, gaussianTaps } from '../../core/image/convolve.ts';
import * as conv from '../../core/image/wasm/convolve.wasm.ts';
import * as hfd from '../../core/stars/wasm/hfd.wasm.ts';
import * as mom from '../../core/stars/wasm/moments.wasm.ts';
import { adaptiveMoments, adaptiveMomentsJs, adaptiveMomentErrors, adaptiveMomentErrorsJs } from '../../core/stars/moments.ts';
import { halfFluxDiameterWithError, halfFluxDiameterWithErrorJs } from '../../core/stars/hfd.ts';
import { instantiateWasm } from '../../core/wasm/instantiate.ts';
import * as psf from '../../core/stars/wasm/psf-fit.wasm.ts';
import * as sky from '../../core/image/wasm/sky-stats.wasm.ts';
import * as meas from '../../core/stars/wasm/measure.wasm.ts';
import { mulberry32, normal } from '../helpers/rng.ts';
// @ts-expect-error plain JavaScript build script without type declarations
import { compileWasm, sourceSha256, WASM_MODULES } from '../../bin/build-wasm.mjs';

const committed: Record<string, { sha: string; b64: string }> = {
  PSF_FIT: { sha: psf.PSF_FIT_SOURCE_SHA256, b64: psf.PSF_FIT_WASM_BASE64 },
  SKY_STATS: { sha: sky.SKY_STATS_SOURCE_SHA256, b64: sky.SKY_STATS_WASM_BASE64 },
  CONVOLVE: { sha: conv.CONVOLVE_SOURCE_SHA256, b64: conv.CONVOLVE_WASM_BASE64 },
  HFD: { sha: hfd.HFD_SOURCE_SHA256, b64: hfd.HFD_WASM_BASE64 },
  MOMENTS: { sha: mom.MOMENTS_SOURCE_SHA256, b64: mom.MOMENTS_WASM_BASE64 },
  MEASURE: { sha: meas.MEASURE_SOURCE_SHA256, b64: meas.MEASURE_WASM_BASE64 },
};

describe('WebAssembly kernels', () => {
  it('each committed module is its compiled source (run npm run build:wasm after editing a .as.ts)', async () => {
    expect((WASM_MODULES as { name: string }[]).map((m) => m.name).sort()).toEqual(Object.keys(committed).sort());
    for (const m of WASM_MODULES as { name: string; source: string; imports: string[] }[]) {
      expect(sourceSha256(m.source, m.imports)).toBe(committed[m.name].sha);
      const bytes: Buffer = await compileWasm(m.source);
      expect(bytes.toString('base64')).toBe(committed[m.name].b64);
    }
  });

  it('sky statistics: the same clipped level, sigma, mean, median and count as the TypeScript loop', () => {
    const e = instantiateWasm(sky.SKY_STATS_WASM_BASE64, 'sky-stats');
    expect(e).not.toBeNull();
    const cap = (e!.capacity as () => number)();
    const buf = new Float32Array(e!.memory.buffer, (e!.samplesPtr as () => number)(), cap);
    const out = new Float64Array(e!.memory.buffer, (e!.outPtr as () => number)(), 5);
    const run = e!.clipped as (n: number, kappa: number, maxIter: number) => void;
    const r = mulberry32(5);
    const g = normal(mulberry32(6));
    for (let k = 0; k < 300; k++) {
      const n = [3, 10, 64, 65, 200, 1024, 4000][k % 7];
      const integer = k % 2 === 0;
      const vals = Float32Array.from({ length: n }, () => {
        let v = 1000 + 25 * g();
        if (r() < 0.05) v += 3000 * r(); // stars in the box
        return integer ? Math.round(v) : v;
      });
      if (k % 11 === 0) vals.fill(7); // a flat box: sigma 0
      const ref = clippedStats(Float32Array.from(vals), n);
      buf.set(vals);
      run(n, 3, 6);
      expect([out[0], out[1], out[2], out[3], out[4]]).toEqual([ref.level, ref.sigma, ref.mean, ref.median, ref.count]);
    }
  });

  it('matched filter: the same filtered frame, bit for bit, as the TypeScript kernel (any size, taps, band)', () => {
    const r = mulberry32(9);
    for (const [w, h, sigma, y0, y1] of [[301, 611, 1.355, 0, 611], [301, 611, 2.2, 17, 300], [7, 5, 4, 0, 5], [5, 40, 0.6, 3, 39], [64, 600, 1.5, 250, 580]] as const) {
      const src = Float32Array.from({ length: w * h }, () => 2000 * r() - 300);
      const taps = gaussianTaps(sigma, 2.5);
      const a = new Float32Array(w * h), b = new Float32Array(w * h);
      convolveBand(src, w, h, taps, y0, y1, a);
      convolveBandJs(src, w, h, taps, y0, y1, b);
      let differing = 0;
      for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) differing++;
      expect(differing).toBe(0);
    }
  });

  it('half-flux diameter: the TypeScript function\'s value, total and error (every variance form, with and without a guess)', () => {
    const r = mulberry32(12);
    const g = normal(mulberry32(13));
    const W = 23;
    for (let k = 0; k < 200; k++) {
      const cx = 11 + r() - 0.5, cy = 11 + r() - 0.5, s = 0.8 + 3 * r();
      const img = Float32Array.from({ length: W * W }, (_, i) => {
        const x = i % W, y = Math.floor(i / W);
        return 3000 * Math.exp(-((x - cx) ** 2 + (y - cy) ** 2) / (2 * s * s)) + 10 * g();
      });
      if (k % 9 === 0) img[5 * W + 6] = Number.NaN;
      const variance = k % 3 === 0 ? null : k % 3 === 1 ? 100 : Float32Array.from(img, (v) => 100 + Math.max(0, v));
      const guess = k % 2 === 0 ? 1.2 * s : undefined;
      const rMax = 4 + 6.5 * r();
      const a = halfFluxDiameterWithError(img, variance, W, W, cx, cy, rMax, guess);
      const b = halfFluxDiameterWithErrorJs(img, variance, W, W, cx, cy, rMax, guess);
      for (const key of ['hfdPx', 'totalFlux', 'errPx'] as const) {
        if (Number.isNaN(b[key])) expect(a[key]).toBeNaN();
        else expect(Math.abs(a[key] - b[key])).toBeLessThanOrEqual(1e-9 * Math.abs(b[key]));
      }
    }
  });

  it('adaptive moments and their errors: the TypeScript functions\' values (round, elongated, coma-like, faint, missing pixels)', () => {
    const r = mulberry32(14);
    const g = normal(mulberry32(15));
    const W = 25;
    let converged = 0;
    for (let k = 0; k < 200; k++) {
      const cx = 12 + r() - 0.5, cy = 12 + r() - 0.5, s1 = 1 + 2.5 * r(), q = 0.5 + 0.5 * r(), th = Math.PI * r();
      const amp = [30, 300, 3000][k % 3];
      const c = Math.cos(th), sn = Math.sin(th);
      const img = Float32Array.from({ length: W * W }, (_, i) => {
        const x = i % W - cx, y = Math.floor(i / W) - cy;
        const u = (x * c + y * sn) / s1, v = (-x * sn + y * c) / (s1 * q);
        const tail = k % 4 === 0 ? 0.3 * Math.exp(-((u - 1.5) ** 2 + v * v) / 2) : 0; // a one-sided flare
        return amp * (Math.exp(-0.5 * (u * u + v * v)) + tail) + 10 * g();
      });
      if (k % 7 === 0) img[4 * W + 3] = Number.NaN;
      const a = adaptiveMoments(img, W, W, 12, 12, 1.5);
      const b = adaptiveMomentsJs(img, W, W, 12, 12, 1.5);
      expect(a.converged).toBe(b.converged);
      // the last bits of exp can move the stop (1e-4 px, 1e-5 of the trace) by one step
      expect(Math.abs(a.iterations - b.iterations)).toBeLessThanOrEqual(1);
      if (!b.converged) continue;
      converged++;
      const tol = a.iterations === b.iterations ? 1e-9 : 1e-4;
      for (const key of ['x', 'y', 'ixx', 'iyy', 'ixy', 'e1', 'e2', 'flux', 'comaX', 'comaY'] as const) {
        expect(Math.abs(a[key] - b[key])).toBeLessThanOrEqual(tol * Math.max(1, Math.abs(b[key])));
      }
      const variance = k % 2 ? 100 : Float32Array.from(img, (v) => 100 + Math.max(0, v));
      const ea = adaptiveMomentErrors(img, variance, W, W, b), eb = adaptiveMomentErrorsJs(img, variance, W, W, b);
      for (const key of ['x', 'y', 'e1', 'e2'] as const) expect(Math.abs(ea[key] - eb[key])).toBeLessThanOrEqual(1e-9 * Math.abs(eb[key]));
    }
    expect(converged).toBeGreaterThan(150);
  });
});
