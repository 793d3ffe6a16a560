/**
 * The plate solution in plain words: the lens's distortion (pattern, size at the corners and edges,
 * the shift in pixels, what it means for stacking and mosaics), and a focal length that differs from
 * the stated one. Distortion moves stars without blurring them, so stopping down does not change it
 * (optics.md section 3, aberration scaling table: distortion scales as (N1/N2)^0).
 */
import type { Finding } from '../diagnose/types.ts';
import type { AstrometrySection } from './section.ts';

const PROJECTION_WORDS: Record<string, string> = {
  rectilinear: 'rectilinear (straight lines stay straight)',
  'fisheye-equidistant': 'an equidistant fisheye',
  'fisheye-equisolid': 'an equisolid-angle fisheye',
  'fisheye-stereographic': 'a stereographic fisheye',
};

/** Corner distortion (percent) from which registration across frames clearly needs a correction (common practice: ~1 % ~ tens of px on a modern sensor). */
const WORTH_A_LOOK_PERCENT = 1;

function f(v: number | null | undefined, d = 2): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '?';
  return (v > 0 ? '+' : '') + v.toFixed(d);
}

export function skyFindings(s: AstrometrySection | undefined): Finding[] {
  if (!s || !s.solved) return [];
  const out: Finding[] = [];
  const d = s.distortion;
  const proj = s.projection && s.projection !== 'rectilinear' ? ` The lens draws the sky as ${PROJECTION_WORDS[s.projection]}; the numbers are the departure from that projection.` : '';
  if (d && d.pattern !== 'none') {
    const err = d.cornerPercentErr !== null ? ` ± ${d.cornerPercentErr.toFixed(2)}` : '';
    const what = d.pattern === 'barrel'
      ? 'barrel (the image is squeezed toward the corners: straight lines near the edges bow outward)'
      : d.pattern === 'pincushion'
        ? 'pincushion (the image is stretched toward the corners: straight lines near the edges bow inward)'
        : `mustache (the distortion turns inside the frame, at about ${Math.round(100 * (d.turnFraction ?? 0))} % of the way to the corners: ${d.k1 < 0 ? 'barrel near the centre, pincushion toward the corners' : 'pincushion near the centre, barrel toward the corners'})`;
    const major = Math.abs(d.cornerPercent) >= WORTH_A_LOOK_PERCENT;
    out.push({
      code: 'DISTORTION',
      severity: major ? 'minor' : 'info',
      message: `Lens distortion: ${what}, ${f(d.cornerPercent)} %${err} at the corners, ${f(d.edgePercent.x)} % at the left and right edges and ${f(d.edgePercent.y)} % at the top and bottom edges; stars move by up to ${d.maxShiftPx.toFixed(1)} px from where a distortion-free lens would put them (${s.starsMatched} catalogue stars matched).${proj} `
        + 'Frames stacked at the same pointing are unaffected, but registering frames that are shifted or rotated against each other, and joining mosaic panels, needs a distortion model (a polynomial or lens-profile correction) or stars near the edges will smear and double. '
        + 'It moves stars without blurring them: stopping down does not change it.',
      numbers: {
        pattern: d.pattern, cornerPercent: d.cornerPercent, cornerPercentErr: d.cornerPercentErr,
        edgePercentX: d.edgePercent.x, edgePercentY: d.edgePercent.y, maxShiftPx: d.maxShiftPx,
        k1: d.k1, k1Err: d.k1Err, k2: d.k2, k2Err: d.k2Err, starsMatched: s.starsMatched,
      },
    });
  }
  const c = s.focalLengthCheck;
  if (c && c.replaced) {
    out.push({
      code: 'FOCAL_LENGTH',
      severity: Math.abs(c.differencePercent) >= 10 ? 'minor' : 'info',
      message: `The stars put the focal length at ${s.focalLengthMm?.toFixed(1)} mm${s.focalLengthErrMm !== null ? ` (± ${s.focalLengthErrMm.toFixed(2)})` : ''}, not the ${c.statedMm} mm the ${c.source === 'user' ? 'command line' : c.source === 'exif' ? 'camera metadata' : 'header'} states (${f(c.differencePercent, 1)} %): arcseconds in this report use the measured value. Check the lens or the capture program's setting (zoom lenses and focal reducers often differ from their marking).`,
      numbers: { measuredMm: s.focalLengthMm, statedMm: c.statedMm, differencePercent: c.differencePercent },
    });
  }
  return out;
}
