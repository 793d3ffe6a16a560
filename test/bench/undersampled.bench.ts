// Undersampled stars (FWHM 1.3-1.8 px): what the pixel-integrated fits cost, and how often the F
// test of measure.ts would prefer a Moffat at each SNR (why undersampled stars below SNR 30 get
// none in 'auto'). Prints figures; asserts nothing. CPU time of this process (best of 5), so other
// processes on a shared machine disturb it less than wall time; still only a guide.
// Run: node bin/run-ts.mjs test/bench/undersampled.bench.ts
import { fitPsfWithSnr } from '../../core/stars/psf-fit.ts';
import { measureStar } from '../../core/stars/measure.ts';
import { addGaussianNoise, matchedSnr, render, rng, type StarTruth } from '../reference/psf-stamps.ts';

const W = 15;
const u = rng(31);

function stamps(fwhm: number, beta: number, nu: number, n: number) {
  return Array.from({ length: n }, () => {
    const t: StarTruth = { model: 'moffat', beta, x0: 7 + u() - 0.5, y0: 7 + u() - 0.5, flux: 1e4, fwhmMajor: fwhm, fwhmMinor: 0.9 * fwhm, thetaDeg: 180 * u() - 90 };
    const clean = render(t, W, W, 'integrated', 12);
    const sn = matchedSnr(clean, 1) / nu;
    return { img: addGaussianNoise(clean, sn, u), sn, s0: fwhm / 2.3548 };
  });
}

function cpuPerItem<T>(items: T[], fn: (t: T) => void): number {
  let best = Infinity;
  for (let rep = 0; rep < 5; rep++) {
    const c0 = process.cpuUsage();
    for (const it of items) fn(it);
    const c = process.cpuUsage(c0);
    best = Math.min(best, (c.user + c.system) / items.length);
  }
  return best;
}

process.stdout.write('undersampled stars: F-test preference for a Moffat (beta 3) by SNR, and CPU per star\n');
for (const fwhm of [1.3, 1.8]) {
  for (const nu of [10, 20, 30, 50, 100]) {
    const set = stamps(fwhm, 3, nu, 120);
    let moffat = 0;
    for (const s of set) {
      const init = { x: 7, y: 7, ixx: 0.4, iyy: 0.4, ixy: 0 };
      const g = fitPsfWithSnr(s.img, W, W, { model: 'gaussian', variance: s.sn * s.sn, init, radius: 4, pixelNodes: 3 });
      const m = fitPsfWithSnr(s.img, W, W, { model: 'moffat', variance: s.sn * s.sn, init, radius: 4, pixelNodes: 3 });
      if (!g.fit.converged || !m.fit.converged) continue;
      // measure.ts's test: F = (chi2_G - chi2_M) / chi2Reduced_M > 9, same pixels
      const chi2G = g.fit.chi2Reduced * (g.nPixels - 7), chi2M = m.fit.chi2Reduced * (m.nPixels - 8);
      if ((chi2G - chi2M) / m.fit.chi2Reduced > 9) moffat++;
    }
    const auto = cpuPerItem(set, (s) => measureStar({ stamp: s.img, w: W, h: W, originX: 0, originY: 0, skyVariance: s.sn * s.sn, gain: null, saturated: false, sigmaGuessPx: s.s0, flags: [] }));
    const point = cpuPerItem(set, (s) => {
      const init = { x: 7, y: 7, ixx: s.s0 * s.s0, iyy: s.s0 * s.s0, ixy: 0 };
      fitPsfWithSnr(s.img, W, W, { model: 'gaussian', variance: s.sn * s.sn, init, radius: 4 });
      fitPsfWithSnr(s.img, W, W, { model: 'moffat', variance: s.sn * s.sn, init, radius: 4 });
    });
    process.stdout.write(`  FWHM ${fwhm} px, SNR ${nu}: Moffat preferred ${moffat}/120; measureStar ${auto.toFixed(0)} us/star (both point-model fits alone: ${point.toFixed(0)} us)\n`);
  }
}
