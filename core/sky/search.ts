/**
 * The search: the field stars are taken back to directions through a trial camera (focal length,
 * projection, optical centre at the frame centre), so that asterisms are described on the sphere
 * exactly as the catalogue's are (codes in the tangent plane at the midpoint of A and B); this
 * keeps the codes of a wide field right away from its centre. Asterisms of the brightest stars,
 * bright ones first (each new star with every three brighter ones), are looked up in the index
 * bands; each catalogue asterism with a close code proposes a placement (the camera's rotation
 * and focal length from the four stars), which verify.ts accepts or rejects with its bound.
 */
import { indexStarsInCone, lookupCode, quadCode, quadRoles, type BandIndex } from './asterism.ts';
import type { Catalogue } from './catalogue.ts';
import { angleOfRadius, radiusOfAngle, skyToPixel, type LensModel, type Projection } from './lens.ts';
import { angleBetween, cross, dot, matTVec, normalize, rotationFromAxes, type Mat3, type Vec3 } from './sphere.ts';
import { verifyPlacement } from './verify.ts';

/** Field stars, brightest first. */
export interface FieldStars {
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly n: number;
}

/** The trial camera through which field stars become directions. */
export interface TrialCamera {
  fPx: number;
  projection: Projection;
}

/** A placement proposed by an asterism and accepted by the verification. */
export interface Placement {
  readonly model: LensModel;
  readonly band: BandIndex;
  /** Field star indices and catalogue indices of the asterism, in code order (A, B, C, D). */
  readonly field: readonly number[];
  readonly cat: readonly number[];
  /** Centre and size of the asterism in the frame, px. */
  readonly xq: number;
  readonly yq: number;
  readonly sizePx: number;
  readonly logOdds: number;
  readonly matched: number;
}

export interface SearchOptions {
  width: number;
  height: number;
  camera: TrialCamera;
  /** Focal lengths (px) a placement may have. */
  fLo: number;
  fHi: number;
  bands: readonly BandIndex[];
  /** Field stars that form asterisms (indices into the field stars, brightest first). */
  quadStars: readonly number[];
  /** Field stars used to verify. */
  verifyStars: number;
  /** Position scatter of the field stars, px. */
  sigmaPx: number;
  /** Allowance for distortion the trial camera lacks: this fraction of the distance from the centre. */
  lensSlope: number;
  acceptLogOdds: number;
  rejectLogOdds: number;
  /** Stop after this many verified placements. */
  maxPlacements: number;
  maxRefs: number;
  signal?: AbortSignal;
}

export interface SearchResult {
  placement: Placement | null;
  /** Placements verified (for the false-positive bound H / T). */
  tried: number;
  asterisms: number;
  stoppedAtLimit: boolean;
}

/** Direction (camera frame: x, y along the pixel axes, z the boresight) of a pixel through a camera without distortion. */
export function cameraDirection(cam: TrialCamera, cx: number, cy: number, x: number, y: number, parity: number, out: Float64Array, o: number): boolean {
  const dx = x - cx, dy = parity * (y - cy);
  const rd = Math.hypot(dx, dy);
  const th = angleOfRadius(cam.projection, rd / cam.fPx);
  if (!Number.isFinite(th) || th >= Math.PI) return false;
  const s = Math.sin(th);
  out[o] = rd > 0 ? (s * dx) / rd : 0;
  out[o + 1] = rd > 0 ? (s * dy) / rd : 0;
  out[o + 2] = Math.cos(th);
  return true;
}

const codeA = new Float64Array(4);
const codeB = new Float64Array(4);

/** Gnomonic coordinates about the midpoint of A and B of four directions (3 per entry in u). */
function tangentCoords(u: ArrayLike<number>, ids: readonly number[], px: number[], py: number[]): boolean {
  const a = ids[0], b = ids[1];
  const m = normalize([u[3 * a] + u[3 * b], u[3 * a + 1] + u[3 * b + 1], u[3 * a + 2] + u[3 * b + 2]]);
  // any right-handed basis of the tangent plane: codes do not depend on its rotation
  let e: Vec3 = Math.abs(m[2]) < 0.9 ? normalize(cross([0, 0, 1], m)) : normalize(cross([1, 0, 0], m));
  const nn = cross(m, e);
  e = normalize(e);
  for (let k = 0; k < 4; k++) {
    const i = ids[k];
    const v: Vec3 = [u[3 * i], u[3 * i + 1], u[3 * i + 2]];
    const d = dot(v, m);
    if (d <= 1e-6) return false;
    px[k] = dot(v, e) / d;
    py[k] = dot(v, nn) / d;
  }
  return true;
}

/** The rotation taking sky directions to camera directions from two pairs (TRIAD: the midpoint and the A-B direction). */
function triad(a1: Vec3, b1: Vec3, a2: Vec3, b2: Vec3): Mat3 {
  const frame = (a: Vec3, b: Vec3) => {
    const m = normalize([a[0] + b[0], a[1] + b[1], a[2] + b[2]]);
    const d = [b[0] - a[0], b[1] - a[1], b[2] - a[2]];
    const k = dot(d, m);
    const t = normalize([d[0] - k * m[0], d[1] - k * m[1], d[2] - k * m[2]]);
    return [m, t, cross(m, t)] as const;
  };
  const [m1, t1, n1] = frame(a1, b1); // sky
  const [m2, t2, n2] = frame(a2, b2); // camera
  // R = F_cam F_sky^T: R v = sum over basis of (v . sky_i) cam_i
  const R = new Float64Array(9);
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) {
    R[3 * i + j] = m2[i] * m1[j] + t2[i] * t1[j] + n2[i] * n1[j];
  }
  return R;
}

export function searchPlacement(cat: Catalogue, stars: FieldStars, o: SearchOptions): SearchResult {
  const { x: X, y: Y } = stars;
  const W = o.width, H = o.height;
  const cx = (W - 1) / 2, cy = (H - 1) / 2;
  const rNorm = Math.hypot(W, H) / 2;
  const Q = o.quadStars;
  const N = Q.length;
  let tried = 0;
  let asterisms = 0;
  const refsBuf: number[] = [];
  const nv = Math.min(stars.n, o.verifyStars);
  const fx = new Float64Array(nv), fy = new Float64Array(nv);
  const rx = new Float64Array(o.maxRefs), ry = new Float64Array(o.maxRefs), rs = new Float64Array(o.maxRefs);
  // directions of the asterism stars through the trial camera, for each parity
  const dirs = [new Float64Array(3 * N), new Float64Array(3 * N)];
  const okDir = [new Uint8Array(N), new Uint8Array(N)];
  for (let p = 0; p < 2; p++) {
    for (let k = 0; k < N; k++) okDir[p][k] = cameraDirection(o.camera, cx, cy, X[Q[k]], Y[Q[k]], p === 0 ? 1 : -1, dirs[p], 3 * k) ? 1 : 0;
  }
  const px = [0, 0, 0, 0], py = [0, 0, 0, 0];
  const pt: [number, number] = [0, 0];
  const tmp = new Float64Array(12);
  const fMid = Math.sqrt(o.fLo * o.fHi);
  const angLo = Math.min(1, o.camera.fPx / o.fHi), angHi = Math.max(1, o.camera.fPx / o.fLo);

  const tryHit = (band: BandIndex, q: number, parity: 1 | -1, roles: readonly number[], local: readonly number[], sizePx: number): Placement | null => {
    const catIds = [band.quads[4 * q], band.quads[4 * q + 1], band.quads[4 * q + 2], band.quads[4 * q + 3]];
    const field = roles.map((r) => Q[local[r]]);
    const sky = catIds.map((c) => [cat.xyz[3 * c], cat.xyz[3 * c + 1], cat.xyz[3 * c + 2]] as Vec3);
    // focal length: the one at which the asterism's angular size on the camera matches the sky's (fixed point)
    const angSky = angleBetween(sky[0], sky[1]);
    let f = o.camera.fPx;
    const cam: TrialCamera = { fPx: f, projection: o.camera.projection };
    for (let it = 0; it < 4; it++) {
      cam.fPx = f;
      for (let k = 0; k < 2; k++) if (!cameraDirection(cam, cx, cy, X[field[k]], Y[field[k]], parity, tmp, 3 * k)) return null;
      const angCam = angleBetween([tmp[0], tmp[1], tmp[2]], [tmp[3], tmp[4], tmp[5]]);
      const nf = (f * angCam) / angSky;
      if (!(nf > 0)) return null;
      const done = Math.abs(nf / f - 1) < 1e-4;
      f = nf;
      if (done) break;
    }
    if (!(f >= o.fLo && f <= o.fHi)) return null;
    cam.fPx = f;
    for (let k = 0; k < 4; k++) if (!cameraDirection(cam, cx, cy, X[field[k]], Y[field[k]], parity, tmp, 3 * k)) return null;
    const u = [0, 1, 2, 3].map((k) => [tmp[3 * k], tmp[3 * k + 1], tmp[3 * k + 2]] as Vec3);
    const rot = triad(sky[0], sky[1], u[0], u[1]);
    const model: LensModel = { rot, fPx: f, cx, cy, parity, projection: o.camera.projection, k1: 0, k2: 0, rNorm };
    // the other two stars must land close to where they were seen
    let xq = 0, yq = 0;
    for (const i of field) { xq += X[i] / 4; yq += Y[i] / 4; }
    for (let k = 2; k < 4; k++) {
      const r = skyToPixel(model, sky[k], pt);
      if (!r || Math.hypot(r[0] - X[field[k]], r[1] - Y[field[k]]) > 3 * o.sigmaPx + 0.05 * sizePx) return null;
    }
    // predicted index stars in the frame: around the boresight, out to the farthest corner
    const axis = matTVec(rot, [0, 0, 1]);
    const reach = Math.min(Math.PI * 0.999, angleOfRadius(o.camera.projection, Math.min(rNorm / f, o.camera.projection === 'fisheye-equisolid' ? 2 : Infinity)) * 1.05 + 1e-4);
    indexStarsInCone(band, cat, axis, Number.isFinite(reach) ? reach : Math.PI / 2, refsBuf);
    let nRef = 0;
    for (const c of refsBuf) {
      if (c === catIds[0] || c === catIds[1] || c === catIds[2] || c === catIds[3]) continue;
      const r = skyToPixel(model, [cat.xyz[3 * c], cat.xyz[3 * c + 1], cat.xyz[3 * c + 2]], pt);
      if (!r || r[0] < -0.5 || r[1] < -0.5 || r[0] > W - 0.5 || r[1] > H - 0.5) continue;
      rx[nRef] = r[0]; ry[nRef] = r[1];
      // scatter: the stars' own, the asterism's leverage, and the distortion the trial camera lacks
      const lever = (o.sigmaPx / sizePx) * Math.hypot(r[0] - xq, r[1] - yq);
      rs[nRef] = Math.hypot(o.sigmaPx, lever, o.lensSlope * Math.hypot(r[0] - cx, r[1] - cy));
      if (++nRef >= o.maxRefs) break;
    }
    let nf = 0;
    for (let i = 0; i < nv; i++) {
      if (i === field[0] || i === field[1] || i === field[2] || i === field[3]) continue;
      fx[nf] = X[i]; fy[nf] = Y[i]; nf++;
    }
    tried++;
    const v = verifyPlacement({ fx, fy, nField: nf, rx, ry, sigma: rs, nRef, area: W * H, accept: o.acceptLogOdds, reject: o.rejectLogOdds });
    if (!v.accepted) return null;
    return { model, band, field, cat: catIds, xq, yq, sizePx, logOdds: v.logOdds, matched: v.matched };
  };

  const local = [0, 0, 0, 0];
  for (let m = 3; m < N; m++) {
    if (o.signal?.aborted) break;
    for (let a = 0; a < m; a++) {
      for (let b = a + 1; b < m; b++) {
        for (let c = b + 1; c < m; c++) {
          local[0] = a; local[1] = b; local[2] = c; local[3] = m;
          for (let p = 0; p < 2; p++) {
            const parity: 1 | -1 = p === 0 ? 1 : -1;
            const u = dirs[p];
            if (!okDir[p][a] || !okDir[p][b] || !okDir[p][c] || !okDir[p][m]) continue;
            // A and B: the two farthest apart on the sphere
            let best = -2, bi = 0, bj = 1;
            for (let i = 0; i < 4; i++) for (let j = i + 1; j < 4; j++) {
              const li = local[i], lj = local[j];
              const d = -(u[3 * li] * u[3 * lj] + u[3 * li + 1] * u[3 * lj + 1] + u[3 * li + 2] * u[3 * lj + 2]);
              if (d > best) { best = d; bi = i; bj = j; }
            }
            const ang = Math.acos(Math.max(-1, Math.min(1, -best)));
            const others = [0, 1, 2, 3].filter((k) => k !== bi && k !== bj);
            const order = [bi, bj, others[0], others[1]];
            const ids = order.map((k) => local[k]);
            if (!tangentCoords(u, ids, px, py)) continue;
            if (!quadCode(px[0], py[0], px[1], py[1], px[2], py[2], px[3], py[3], codeA)) break;
            asterisms++;
            const sizePx = Math.hypot(X[Q[ids[0]]] - X[Q[ids[1]]], Y[Q[ids[0]]] - Y[Q[ids[1]]]);
            if (sizePx < 20) continue;
            const r = quadRoles(px[0], py[0], px[1], py[1], px[2], py[2], px[3], py[3]);
            const roles = [order[r[0]], order[r[1]], order[r[2]], order[r[3]]];
            const tolCode = Math.min(0.025, 0.008 + (2.5 * Math.SQRT2 * o.sigmaPx) / sizePx);
            const alts: number[][] = [roles];
            if (Math.abs(codeA[0] + codeA[2] - 1) < tolCode) alts.push([roles[1], roles[0], roles[3], roles[2]]);
            if (Math.abs(codeA[0] - codeA[2]) < tolCode) alts.push([roles[0], roles[1], roles[3], roles[2]]);
            for (const band of o.bands) {
              // the asterism's true angle is its trial angle times f_trial / f, for f in range
              if (ang * angHi < band.dLo || ang * angLo > band.dHi) continue;
              for (const rl of alts) {
                let code: Float64Array = codeA;
                if (rl !== roles) {
                  if (!tangentCoords(u, rl.map((k) => local[k]), px, py)) continue;
                  rawCode(px, py, codeB);
                  code = codeB;
                }
                let found: Placement | null = null;
                lookupCode(band, code, tolCode, (qq) => {
                  if (found || tried >= o.maxPlacements) return;
                  found = tryHit(band, qq, parity, rl, local, sizePx);
                });
                if (found) return { placement: found, tried, asterisms, stoppedAtLimit: false };
                if (tried >= o.maxPlacements) return { placement: null, tried, asterisms, stoppedAtLimit: true };
              }
            }
          }
        }
      }
    }
  }
  void fMid;
  return { placement: null, tried, asterisms, stoppedAtLimit: false };
}

/** The code of four points in the given order, without the symmetry breaking. */
function rawCode(px: number[], py: number[], out: Float64Array): void {
  const ax = px[0], ay = py[0], u = px[1] - ax, v = py[1] - ay, n2 = u * u + v * v;
  for (let k = 0; k < 2; k++) {
    const cx = px[2 + k] - ax, cy = py[2 + k] - ay;
    const pa = (cx * u + cy * v) / n2, pb = (cy * u - cx * v) / n2;
    out[2 * k] = pa - pb;
    out[2 * k + 1] = pa + pb;
  }
}

export { radiusOfAngle };
