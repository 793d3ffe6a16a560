/**
 * Directions on the celestial sphere as unit vectors (ICRS axes: x toward RA 0, Dec 0; z toward
 * the north pole), and the gnomonic (TAN) standard coordinates about a tangent point.
 * Standard coordinates xi (toward east) and eta (toward north) as in Calabretta & Greisen 2002
 * (A&A 395, 1077), zenithal projection with the native pole at the tangent point, LONPOLE 180.
 */

export const DEG = Math.PI / 180;
export const ARCSEC = Math.PI / (180 * 3600);

export type Vec3 = [number, number, number];

export function radecToVec(raRad: number, decRad: number): Vec3 {
  const c = Math.cos(decRad);
  return [c * Math.cos(raRad), c * Math.sin(raRad), Math.sin(decRad)];
}

/** RA in [0, 2 pi), Dec in [-pi/2, pi/2]. */
export function vecToRadec(v: ArrayLike<number>): { ra: number; dec: number } {
  const n = Math.hypot(v[0], v[1], v[2]);
  let ra = Math.atan2(v[1], v[0]);
  if (ra < 0) ra += 2 * Math.PI;
  return { ra, dec: Math.asin(Math.max(-1, Math.min(1, v[2] / n))) };
}

export function dot(a: ArrayLike<number>, b: ArrayLike<number>): number {
  return a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
}

export function cross(a: ArrayLike<number>, b: ArrayLike<number>): Vec3 {
  return [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
}

export function normalize(v: ArrayLike<number>): Vec3 {
  const n = Math.hypot(v[0], v[1], v[2]);
  return [v[0] / n, v[1] / n, v[2] / n];
}

/** Angle between two unit vectors, radians (atan2 form: accurate at small and large angles). */
export function angleBetween(a: ArrayLike<number>, b: ArrayLike<number>): number {
  const c = cross(a, b);
  return Math.atan2(Math.hypot(c[0], c[1], c[2]), dot(a, b));
}

/**
 * East and north unit vectors at a direction t (the local tangent basis). At the poles east is
 * taken along +y (RA 90 deg), a convention of this module.
 */
export function tangentBasis(t: ArrayLike<number>): { east: Vec3; north: Vec3 } {
  let e: Vec3 = [-t[1], t[0], 0];
  const n = Math.hypot(e[0], e[1]);
  if (n < 1e-12) e = [0, 1, 0];
  else e = [e[0] / n, e[1] / n, 0];
  const north = cross(t, e);
  return { east: e, north };
}

/**
 * Gnomonic standard coordinates (radians) of direction v about tangent point t, given t's basis;
 * null for directions 90 deg or more from t.
 */
export function gnomonic(v: ArrayLike<number>, t: ArrayLike<number>, east: ArrayLike<number>, north: ArrayLike<number>): [number, number] | null {
  const d = dot(v, t);
  if (d <= 1e-9) return null;
  return [dot(v, east) / d, dot(v, north) / d];
}

/** Inverse of gnomonic(). */
export function ungnomonic(xi: number, eta: number, t: ArrayLike<number>, east: ArrayLike<number>, north: ArrayLike<number>): Vec3 {
  return normalize([
    t[0] + xi * east[0] + eta * north[0],
    t[1] + xi * east[1] + eta * north[1],
    t[2] + xi * east[2] + eta * north[2],
  ]);
}

/** 3x3 matrices as row-major Float64Array(9). */
export type Mat3 = Float64Array;

export function matVec(m: Mat3, v: ArrayLike<number>): Vec3 {
  return [
    m[0] * v[0] + m[1] * v[1] + m[2] * v[2],
    m[3] * v[0] + m[4] * v[1] + m[5] * v[2],
    m[6] * v[0] + m[7] * v[1] + m[8] * v[2],
  ];
}

/** Transpose times vector (the inverse of a rotation). */
export function matTVec(m: Mat3, v: ArrayLike<number>): Vec3 {
  return [
    m[0] * v[0] + m[3] * v[1] + m[6] * v[2],
    m[1] * v[0] + m[4] * v[1] + m[7] * v[2],
    m[2] * v[0] + m[5] * v[1] + m[8] * v[2],
  ];
}

export function matMul(a: Mat3, b: Mat3): Mat3 {
  const o = new Float64Array(9);
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) {
    o[3 * i + j] = a[3 * i] * b[j] + a[3 * i + 1] * b[3 + j] + a[3 * i + 2] * b[6 + j];
  }
  return o;
}

/** Rotation by the vector w (axis w/|w|, angle |w|), Rodrigues' formula. */
export function rotationFromVector(w: ArrayLike<number>): Mat3 {
  const th = Math.hypot(w[0], w[1], w[2]);
  const m = new Float64Array([1, 0, 0, 0, 1, 0, 0, 0, 1]);
  if (th < 1e-300) return m;
  const kx = w[0] / th, ky = w[1] / th, kz = w[2] / th;
  const c = Math.cos(th), s = Math.sin(th), C = 1 - c;
  m[0] = c + kx * kx * C; m[1] = kx * ky * C - kz * s; m[2] = kx * kz * C + ky * s;
  m[3] = ky * kx * C + kz * s; m[4] = c + ky * ky * C; m[5] = ky * kz * C - kx * s;
  m[6] = kz * kx * C - ky * s; m[7] = kz * ky * C + kx * s; m[8] = c + kz * kz * C;
  return m;
}

/** Rows = the camera axes (x right, y along increasing rows, z = boresight) in sky coordinates. */
export function rotationFromAxes(xAxis: ArrayLike<number>, yAxis: ArrayLike<number>, zAxis: ArrayLike<number>): Mat3 {
  return new Float64Array([xAxis[0], xAxis[1], xAxis[2], yAxis[0], yAxis[1], yAxis[2], zAxis[0], zAxis[1], zAxis[2]]);
}

/** Re-orthonormalise a nearly orthonormal rotation (Gram-Schmidt on the rows, z kept). */
export function orthonormalize(m: Mat3): Mat3 {
  const z = normalize([m[6], m[7], m[8]]);
  let x: Vec3 = [m[0], m[1], m[2]];
  const d = dot(x, z);
  x = normalize([x[0] - d * z[0], x[1] - d * z[1], x[2] - d * z[2]]);
  const y = cross(z, x);
  return rotationFromAxes(x, y, z);
}
