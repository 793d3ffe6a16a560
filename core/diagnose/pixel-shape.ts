/**
 * The shape of the pixels on the sky, from a FITS header's celestial WCS (Greisen & Calabretta
 * 2002, A&A 395, 1061: the linear part CD, or CDELT with PC or CROTA2). Intermediate world
 * coordinates are isotropic on the sky near the reference point, so a round star of variance s^2
 * there has the pixel covariance s^2 (J^T J)^-1 with J = CD [DER]. Unequal pixel scales or skewed
 * axes (HST's ACS/HRC detector sits tilted in the focal plane: its pixels are 1.18:1 on the sky)
 * therefore stretch every star the same way: a uniform elongation that is the detector's
 * geometry, not trailing.
 */
type Meta = Readonly<Record<string, string | number | boolean>>;

export interface PixelShape {
  /** Distortion (e1, e2) a round sky star takes in pixel coordinates (optics.md 1.3 convention). */
  e1: number;
  e2: number;
  /** Axis ratio of the stretch (major/minor) and the major axis, degrees in (-90, 90]. */
  axisRatio: number;
  angleDeg: number;
  /** Pixel scales along x and y, arcsec/px. */
  scaleXArcsec: number;
  scaleYArcsec: number;
  source: string;
}

function num(meta: Meta, k: string): number | undefined {
  const v = meta[k];
  const x = typeof v === 'number' ? v : typeof v === 'string' && v.trim() !== '' ? Number(v) : NaN;
  return Number.isFinite(x) ? x : undefined;
}

/** The WCS's linear part in degrees per pixel (row-major), or null when the header has none. */
export function wcsLinear(meta: Meta): { cd: [number, number, number, number]; source: string } | null {
  const c1 = typeof meta.CTYPE1 === 'string' ? meta.CTYPE1.trim().toUpperCase() : '';
  const c2 = typeof meta.CTYPE2 === 'string' ? meta.CTYPE2.trim().toUpperCase() : '';
  const celestial = (c1.startsWith('RA--') && c2.startsWith('DEC-')) || (c1.startsWith('DEC-') && c2.startsWith('RA--'))
    || (c1.startsWith('GLON') && c2.startsWith('GLAT')) || (c1.startsWith('ELON') && c2.startsWith('ELAT'));
  if (!celestial) return null;
  const cd = ['CD1_1', 'CD1_2', 'CD2_1', 'CD2_2'].map((k) => num(meta, k));
  if (cd.some((v) => v !== undefined)) return { cd: [cd[0] ?? 0, cd[1] ?? 0, cd[2] ?? 0, cd[3] ?? 0], source: 'the CD matrix of the header WCS' };
  const d1 = num(meta, 'CDELT1');
  const d2 = num(meta, 'CDELT2');
  if (d1 === undefined || d2 === undefined) return null;
  const pc = ['PC1_1', 'PC1_2', 'PC2_1', 'PC2_2'].map((k) => num(meta, k));
  if (pc.some((v) => v !== undefined)) {
    const p = [pc[0] ?? 1, pc[1] ?? 0, pc[2] ?? 0, pc[3] ?? 1];
    return { cd: [d1 * p[0], d1 * p[1], d2 * p[2], d2 * p[3]], source: 'CDELT and PC of the header WCS' };
  }
  // CROTA2: the older rotation form (Calabretta & Greisen 2002, A&A 395, 1077; from memory)
  const r = ((num(meta, 'CROTA2') ?? 0) * Math.PI) / 180;
  return { cd: [d1 * Math.cos(r), -d2 * Math.sin(r), d1 * Math.sin(r), d2 * Math.cos(r)], source: 'CDELT and CROTA2 of the header WCS' };
}

/** The stretch the WCS implies, or null (no celestial WCS, or a degenerate one). */
export function pixelShapeFromHeader(meta: Meta): PixelShape | null {
  const lin = wcsLinear(meta);
  if (!lin) return null;
  const [a, b, c, d] = lin.cd;
  // J^T J and its inverse (the pixel covariance of a unit round sky star)
  const gxx = a * a + c * c;
  const gyy = b * b + d * d;
  const gxy = a * b + c * d;
  const det = gxx * gyy - gxy * gxy;
  if (!(det > 0) || !Number.isFinite(det)) return null;
  const cxx = gyy / det;
  const cyy = gxx / det;
  const cxy = -gxy / det;
  const tr = cxx + cyy;
  const e1 = (cxx - cyy) / tr;
  const e2 = (2 * cxy) / tr;
  const e = Math.hypot(e1, e2);
  // |e| = (A^2 - B^2) / (A^2 + B^2) (optics.md 1.3), so A/B = sqrt((1 + |e|) / (1 - |e|))
  const axisRatio = Math.sqrt((1 + e) / (1 - e));
  let angleDeg = (0.5 * Math.atan2(e2, e1) * 180) / Math.PI;
  if (angleDeg <= -90) angleDeg += 180;
  return {
    e1, e2, axisRatio, angleDeg,
    scaleXArcsec: Math.sqrt(gxx) * 3600, scaleYArcsec: Math.sqrt(gyy) * 3600,
    source: lin.source,
  };
}
