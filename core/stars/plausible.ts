/**
 * A star must be a star (issue 13 item 3): detections whose size or concentration no star of this
 * frame could have are set aside, so that noise blobs, processing artefacts and faint smudges do
 * not make the summary or drive the field map. Compared with the stars around them, because the
 * optics change the star size across the field (a fisheye softens 1.2-1.4x toward its edge, a
 * tilted sensor blurs one side).
 *
 * - The local star size: the median FWHM of the significant clean stars (SNR >= 30) in the same
 *   zone of a 4 x 4 grid, or of the whole frame where a zone holds fewer than 3, or the detection's
 *   PSF size when the frame has fewer than 3.
 * - Narrower than half the local size: a cosmic-ray hit when significant (SNR >= 30), a noise
 *   blob ('spurious') when faint. No profile the optics form is that much sharper than its
 *   neighbours; a real faint star's FWHM scatters by about 1/SNR (optics.md 1.6), 5 % at SNR 20.
 * - Faint (SNR < 30) and more than twice the local size, beyond 3 standard errors: a diffuse blob.
 * The half-flux diameter is not used: neighbours in a crowded field and the sky's level under a
 * faint star move it far more than they move the fitted FWHM.
 */
import type { Star, StarFlag } from './types.ts';
import { median } from '../image/stats.ts';

/** SNR above which a detection is certainly a source (far above any noise blob). */
const SIGNIFICANT_SNR = 30;
const GRID = 4;
/** At least this many significant stars make a zone's (or the frame's) reference size. */
const MIN_REF = 3;
const NARROW = 0.5;
const WIDE = 2;

/** Flags to add to each star (same order as `stars`), from the population; `psfFwhmPx` is the fallback size. */
export function implausibleFlags(stars: readonly Star[], width: number, height: number, psfFwhmPx: number): StarFlag[][] {
  const zoneOf = (s: Star) => Math.min(GRID - 1, Math.max(0, Math.floor((GRID * s.x) / width))) + GRID * Math.min(GRID - 1, Math.max(0, Math.floor((GRID * s.y) / height)));
  const refs: number[][] = Array.from({ length: GRID * GRID }, () => []);
  const all: number[] = [];
  for (const s of stars) {
    if (s.flags.length !== 0 || !(s.snr >= SIGNIFICANT_SNR) || !Number.isFinite(s.fwhmPx)) continue;
    refs[zoneOf(s)].push(s.fwhmPx);
    all.push(s.fwhmPx);
  }
  const med = (a: number[]) => median(Float64Array.from(a), a.length);
  const global = all.length >= MIN_REF ? med(all) : psfFwhmPx;
  const zoneRef = refs.map((a) => (a.length >= MIN_REF ? med(a) : global));
  return stars.map((s) => {
    const out: StarFlag[] = [];
    if (s.flags.includes('hot-pixel') || s.flags.includes('cosmic-ray') || !Number.isFinite(s.fwhmPx)) return out;
    const ref = zoneRef[zoneOf(s)];
    if (!(ref > 0)) return out;
    const significant = s.snr >= SIGNIFICANT_SNR;
    const ef = Number.isFinite(s.err.fwhmPx) ? s.err.fwhmPx : s.fwhmPx / Math.max(s.snr, 1);
    if (s.fwhmPx < NARROW * ref) out.push(significant ? 'cosmic-ray' : 'spurious');
    else if (!significant && s.fwhmPx - WIDE * ref > 3 * ef) out.push('spurious');
    return out;
  });
}
