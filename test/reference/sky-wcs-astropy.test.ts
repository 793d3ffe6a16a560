// core/sky/wcs.ts against astropy.wcs (Debian python3-astropy, which wraps WCSLIB): the same
// TAN, TAN-SIP (including the openstartracker frame's solver-written header) and TPV headers,
// pixel -> world and back. The distortion a SIP header implies is checked against the exact
// radial value of a SIP polynomial built to be radial (derived in the test). Skips when astropy
// is missing (.ci/run installs it).
import { fileURLToPath } from 'node:url';
import { describe, expect, it, beforeAll } from 'vitest';
import { readWcs, wcsDistortion, wcsPixelToSky, wcsSkyToPixel } from '../../core/sky/wcs.ts';
import { angleBetween, radecToVec, DEG } from '../../core/sky/sphere.ts';
import { astropyPython, runPython } from '../helpers/python.ts';

const py = astropyPython();
const script = fileURLToPath(new URL('./sky-wcs-astropy.py', import.meta.url));
const ost = fileURLToPath(new URL('../fixtures/real/openstartracker_feb16_2.new.fits', import.meta.url));

interface Case { header: Record<string, string | number>; width: number; height: number; pix: [number, number][]; world: [number, number][] }

describe('WCS read against astropy.wcs', () => {
  // never skipped silently (README): without the package this fails and says what to install
  beforeAll(() => { if (!py) throw new Error('python3 with astropy is missing: apt-get install -y python3-astropy python3-numpy (CI installs them)'); });
  const cases: Case[] = py ? JSON.parse(runPython(py, script, [ost])) : [];

  it('pixel to sky agrees with astropy to 1 milliarcsecond, and back to 1e-6 px (TAN, TAN-SIP, TPV)', () => {
    expect(cases.length).toBe(6);
    for (const c of cases) {
      const { wcs, note } = readWcs(c.header);
      expect(note).toBeNull();
      let worst = 0, worstBack = 0;
      c.pix.forEach(([x, y], k) => {
        const ours = wcsPixelToSky(wcs!, x, y);
        const ref = radecToVec(c.world[k][0] * DEG, c.world[k][1] * DEG);
        worst = Math.max(worst, angleBetween(ours.v, ref) / DEG * 3600);
        const back = wcsSkyToPixel(wcs!, ref)!;
        worstBack = Math.max(worstBack, Math.hypot(back[0] - x, back[1] - y));
      });
      if (process.env.SKYLOUPE_VERBOSE) console.log(c.header.CTYPE1, worst, worstBack);
      expect(worst, `${c.header.CTYPE1}: worst ${worst} arcsec`).toBeLessThan(1e-3);
      expect(worstBack, `${c.header.CTYPE1}`).toBeLessThan(1e-6);
    }
  });

  it('a SIP header with a pure cubic radial term reads as that radial distortion', () => {
    // A_3_0 = A_1_2 = B_2_1 = B_0_3 = k: u' = u (1 + k r^2) for the SIP of case 4 without its
    // quadratic terms; the WCS then maps pixels to an ideal frame with r_u = r_d (1 + k r_d^2), so
    // r_d = r_u (1 - k r_u^2 + ...), k1 ~ -k R^2 to first order (R = half diagonal, about CRPIX at the frame centre)
    const h: Record<string, string | number> = { CTYPE1: 'RA---TAN-SIP', CTYPE2: 'DEC--TAN-SIP', CRPIX1: 3000.5, CRPIX2: 2000.5, CRVAL1: 83.8, CRVAL2: -5.4,
      CD1_1: -0.0033, CD1_2: 0, CD2_1: 0, CD2_2: 0.0033, A_ORDER: 3, B_ORDER: 3 };
    const k = -2e-9;
    Object.assign(h, { A_3_0: k, A_1_2: k, B_2_1: k, B_0_3: k });
    const d = wcsDistortion(readWcs(h).wcs!, 6000, 4000)!;
    const R = Math.hypot(6000, 4000) / 2;
    // exact to all orders: r_u = r_d (1 + k r_d^2) at the corner r_d = R gives (r_d - r_u) / r_u
    const exact = 100 * (1 / (1 + k * R * R) - 1);
    expect(d.distortion.pattern).toBe('pincushion');
    expect(d.distortion.cornerPercent).toBeCloseTo(exact, 2);
    expect(d.nonRadialPx).toBeLessThan(0.05);
  });
});
