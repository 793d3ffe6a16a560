/**
 * The lens model: a camera orientation on the sky, a projection of the field angle theta onto the
 * image radius, and radial distortion about the optical centre,
 *   r_d = r (1 + k1 q^2 + k2 q^4),  q = r / R,  R = half the frame diagonal (px),
 * the radial terms of the Brown-Conrady model (Brown 1966, Photogrammetric Engineering 32, 444).
 * Projections (ideal image radius r for field angle theta, focal length f):
 *   rectilinear r = f tan(theta); equidistant r = f theta; equisolid-angle r = 2 f sin(theta / 2);
 *   stereographic r = 2 f tan(theta / 2) (the usual fisheye mappings, e.g. Kannala & Brandt 2006,
 *   IEEE PAMI 28, 1335, table 1).
 */
import { matTVec, normalize, type Mat3, type Vec3 } from './sphere.ts';

export type Projection = 'rectilinear' | 'fisheye-equidistant' | 'fisheye-equisolid' | 'fisheye-stereographic';
export const PROJECTIONS: readonly Projection[] = ['rectilinear', 'fisheye-equidistant', 'fisheye-equisolid', 'fisheye-stereographic'];

/** Largest field angle each projection can image, radians. */
export function maxFieldAngle(p: Projection): number {
  switch (p) {
    case 'rectilinear': return (89 * Math.PI) / 180;
    case 'fisheye-stereographic': return (175 * Math.PI) / 180;
    default: return Math.PI * (179 / 180);
  }
}

/** r / f for field angle theta (radians). */
export function radiusOfAngle(p: Projection, theta: number): number {
  switch (p) {
    case 'rectilinear': return Math.tan(theta);
    case 'fisheye-equidistant': return theta;
    case 'fisheye-equisolid': return 2 * Math.sin(theta / 2);
    case 'fisheye-stereographic': return 2 * Math.tan(theta / 2);
  }
}

/** Field angle for r / f = rho (the inverse of radiusOfAngle); NaN beyond the projection's reach. */
export function angleOfRadius(p: Projection, rho: number): number {
  switch (p) {
    case 'rectilinear': return Math.atan(rho);
    case 'fisheye-equidistant': return rho;
    case 'fisheye-equisolid': return rho <= 2 ? 2 * Math.asin(rho / 2) : NaN;
    case 'fisheye-stereographic': return 2 * Math.atan(rho / 2);
  }
}

export interface LensModel {
  /** Rows: the camera's x axis (along +x pixels), y axis (along +y pixels) and boresight, in sky coordinates. */
  readonly rot: Mat3;
  /** Focal length in pixels. */
  readonly fPx: number;
  /** Optical centre (where the boresight lands), px. */
  readonly cx: number;
  readonly cy: number;
  /** +1: image y follows the camera's y axis; -1: mirrored (y flipped). */
  readonly parity: 1 | -1;
  readonly projection: Projection;
  readonly k1: number;
  readonly k2: number;
  /** Normalising radius R, px (half the frame diagonal). */
  readonly rNorm: number;
}

/** Distortion factor r_d / r at undistorted radius r. */
export function distortionFactor(m: Pick<LensModel, 'k1' | 'k2' | 'rNorm'>, r: number): number {
  const q2 = (r / m.rNorm) ** 2;
  return 1 + m.k1 * q2 + m.k2 * q2 * q2;
}

/** Undistorted radius for a distorted radius (Newton from r = r_d); NaN where the model folds over. */
export function undistortRadius(m: Pick<LensModel, 'k1' | 'k2' | 'rNorm'>, rd: number): number {
  if (m.k1 === 0 && m.k2 === 0) return rd;
  let r = rd;
  for (let i = 0; i < 30; i++) {
    const q2 = (r / m.rNorm) ** 2;
    const g = r * (1 + m.k1 * q2 + m.k2 * q2 * q2) - rd;
    const dg = 1 + 3 * m.k1 * q2 + 5 * m.k2 * q2 * q2;
    if (!(dg > 0.05)) return NaN;
    const step = g / dg;
    r -= step;
    if (Math.abs(step) < 1e-10 * (1 + rd)) return r;
  }
  return r;
}

/** Pixel position of a sky direction (unit vector); null when the lens cannot image it. */
export function skyToPixel(m: LensModel, v: ArrayLike<number>, out: [number, number] = [0, 0]): [number, number] | null {
  const R = m.rot;
  const c0 = R[0] * v[0] + R[1] * v[1] + R[2] * v[2];
  const c1 = R[3] * v[0] + R[4] * v[1] + R[5] * v[2];
  const c2 = R[6] * v[0] + R[7] * v[1] + R[8] * v[2];
  const s = Math.sqrt(c0 * c0 + c1 * c1);
  const theta = Math.atan2(s, c2);
  if (theta > maxFieldAngle(m.projection)) return null;
  const r = m.fPx * radiusOfAngle(m.projection, theta);
  const k = distortionFactor(m, r);
  if (s < 1e-15) { out[0] = m.cx; out[1] = m.cy; return out; }
  const rd = r * k;
  out[0] = m.cx + (rd * c0) / s;
  out[1] = m.cy + (m.parity * rd * c1) / s;
  return out;
}

/** Sky direction of a pixel; null where the model has no inverse (beyond a fold or the projection). */
export function pixelToSky(m: LensModel, x: number, y: number): Vec3 | null {
  const dx = x - m.cx, dy = m.parity * (y - m.cy);
  const rd = Math.hypot(dx, dy);
  const r = undistortRadius(m, rd);
  if (!Number.isFinite(r)) return null;
  const theta = angleOfRadius(m.projection, r / m.fPx);
  if (!Number.isFinite(theta)) return null;
  const st = Math.sin(theta);
  const c: Vec3 = rd > 0 ? [(st * dx) / rd, (st * dy) / rd, Math.cos(theta)] : [0, 0, 1];
  return normalize(matTVec(m.rot, c));
}

/** Sky scale at the optical centre, arcsec per pixel (every projection has dr/dtheta = f there). */
export function centreScaleArcsecPerPx(m: Pick<LensModel, 'fPx'>): number {
  return (180 * 3600) / Math.PI / m.fPx;
}
