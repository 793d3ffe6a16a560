/**
 * Tilt in micrometres on Moffat seeing (issue 13). Cause, measured: Gaussian-weighted (adaptive)
 * moments of a defocus disk through a Moffat core grow faster than through a Gaussian core of the
 * same adaptive size (the widening weight takes in more of the Moffat wings), so the Gaussian-core
 * gain read focus errors 7-16 % high at beta 4.5-2.5. The defocus model now uses the gain for the
 * frame's Moffat core (core/field/coma-calibration.ts moffatDefocusTable).
 * References: (1) a disk through a Moffat core rendered pixel by pixel here, by direct summation
 * of the Moffat formula (Moffat 1969; optics.md 1.1) over points of the disk, measured with
 * core/stars' pixel-based adaptive moments; (2) the simulator's truth (photon-sampled stars with
 * Moffat seeing through the focus plane of a tilted sensor, optics.md 4): tilt within 10 % for
 * beta 2.5-4.5.
 */
import { describe, expect, it } from 'vitest';
import { adaptiveMoments } from '../../core/stars/moments.ts';
import { defocusGain } from '../../core/field/coma-calibration.ts';
import { diagnose } from '../../core/diagnose/index.ts';
import { ctxOf, renderAndAnalyze, scene } from './recovery-render.ts';

/** A Moffat core (FWHM px, index beta) through a uniform disk of diameter d px, integrated over 3x3 points per pixel. */
function renderedT(fwhm: number, beta: number, d: number): number {
  const R = 24;
  const w = 2 * R + 1;
  const alpha = fwhm / (2 * Math.sqrt(2 ** (1 / beta) - 1));
  const pts: [number, number][] = [];
  if (d > 0) {
    for (let i = 0; i < 12; i++) {
      const r = (d / 2) * Math.sqrt((i + 0.5) / 12);
      for (let j = 0; j < 24; j++) { const p = ((j + 0.5 * (i % 2)) * 2 * Math.PI) / 24; pts.push([r * Math.cos(p), r * Math.sin(p)]); }
    }
  } else pts.push([0, 0]);
  const img = new Float32Array(w * w);
  for (let y = 0; y < w; y++) for (let x = 0; x < w; x++) {
    let s = 0;
    for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) {
      const px = x - R + (a - 1) / 3 - 0.21;
      const py = y - R + (b - 1) / 3 + 0.13;
      for (const [dx, dy] of pts) s += (1 + ((px - dx) ** 2 + (py - dy) ** 2) / (alpha * alpha)) ** -beta;
    }
    img[y * w + x] = s;
  }
  const m = adaptiveMoments(img, w, w, R, R, fwhm / 2.3548);
  return m.ixx + m.iyy;
}

/** Disk diameter read back from the size growth through the model T = T0 + q^2 H(2 q^2 / T0), q^2 = d^2 / 8. */
function readBack(T0: number, T: number, beta: number | null): number {
  let lo = 0;
  let hi = 50;
  for (let k = 0; k < 60; k++) {
    const q = (lo + hi) / 2;
    if (T0 + q * q * defocusGain((2 * q * q) / T0, 0, beta).H < T) lo = q; else hi = q;
  }
  return lo * Math.sqrt(8);
}

describe('defocus through a Moffat core', () => {
  it('the Moffat-core gain reads a rendered disk within 3 %, where the Gaussian-core gain reads it 5-25 % high', () => {
    for (const beta of [2.5, 4.5]) {
      const T0 = renderedT(2.5, beta, 0);
      for (const d of [2, 4]) {
        const T = renderedT(2.5, beta, d);
        const moffat = readBack(T0, T, beta) / d;
        const gauss = readBack(T0, T, null) / d;
        console.log(`beta ${beta}, disk ${d} px: read ${moffat.toFixed(3)} x (Moffat gain), ${gauss.toFixed(3)} x (Gaussian gain)`);
        expect(Math.abs(moffat - 1)).toBeLessThan(0.03);
        expect(gauss - 1).toBeGreaterThan(0.05);
      }
    }
  });
});

describe('tilt on Moffat seeing, through the real pipeline', () => {
  it.each([
    { beta: 2.5, x: 40, y: 0 },
    { beta: 2.5, x: 41.5, y: 18.5 },
    { beta: 3.5, x: 40, y: 0 },
    { beta: 4.5, x: 41.5, y: 18.5 },
  ])('beta $beta, tilt $x / $y um across width / height: within 10 %', async ({ beta, x, y }) => {
    const s = scene({ seed: 5, pixelSizeUm: 2.4, aberrations: { tiltXUmAcross: x, tiltYUmAcross: y } });
    (s.psf as { seeing: unknown }).seeing = { model: 'moffat', fwhmPx: 2.5, beta };
    const { analysis } = await renderAndAnalyze(s);
    const t = diagnose(analysis.stars, ctxOf(analysis)).diagnosis.tilt;
    const ratio = Math.hypot(t.acrossFrameUm.x!, t.acrossFrameUm.y!) / Math.hypot(x, y);
    console.log(`Moffat beta ${beta}, tilt ${x}/${y} um: found ${t.acrossFrameUm.x!.toFixed(1)}/${t.acrossFrameUm.y!.toFixed(1)} um, ratio ${ratio.toFixed(3)}, ${t.significance.toFixed(1)} sigma`);
    expect(t.significant).toBe(true);
    expect(Math.abs(ratio - 1)).toBeLessThan(0.1);
    expect(Math.abs(t.acrossFrameUm.x! - x)).toBeLessThan(0.1 * Math.hypot(x, y));
    expect(Math.abs(t.acrossFrameUm.y! - y)).toBeLessThan(0.1 * Math.hypot(x, y));
  });
});
