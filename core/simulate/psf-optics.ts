/**
 * Geometric optics model of a star image, per optics.md §3-§6.
 *
 * Focus error at a sensor point (x, y in mm from the optical centre, µm, positive =
 * sensor behind best focus; optics.md §4):
 *   δ(x,y) = δ0 + t_x x + t_y y + c (x^2 + y^2)             (medial surface)
 * Astigmatism splits it into the sagittal and tangential surfaces around the medial
 * one, with S-T separation Δz = z_S - z_T = k_ast h^2:
 *   δ_s = δ - Δz/2,  δ_t = δ + Δz/2.
 * Rays: a pupil point P = ρ(cos ψ, sin ψ), uniform over the (annular) pupil, lands at
 * ε = -2N ∇W (Hopkins form, optics.md §3) with W = W020 ρ^2 + W222 H^2 (P·û)^2 +
 * W131 H ρ^2 (P·û_c); with W020 = δ_s/(8N^2) and W222 H^2 = Δz/(8N^2) this is
 *   radial part  -(δ_t/2N) (P·û),  perpendicular part  -(δ_s/2N) (P·v̂)
 * (a disk of diameter |δ|/N when Δz = 0; sagittal focus δ_s = 0 -> radial line),
 * and the coma part S [ (3a^2 + b^2) û_c + 2ab v̂_c ] with a, b the pupil coordinates
 * along and across û_c: zone ρ maps to a circle of radius Sρ^2 centred 2Sρ^2 out.
 * Spherical aberration: zone ρ crosses the axis L ρ^2 beyond the paraxial focus (L = marginal
 * minus paraxial focus, along the light; L < 0 under-corrected), so its rays reach the sensor at
 * -(δ - L ρ^2) P / 2N: the defocus term with δ -> δ - L ρ^2. At the paraxial focus the marginal
 * ray misses by L/2N, so LSA = 2N x TSA (W040 = -L/(16 N^2) in the Hopkins form, optics.md §3).
 * Then seeing (Gaussian or Moffat), a uniform linear trail and field rotation.
 */
import type { Rng } from './prng.ts';
import { glNodes } from './quadrature.ts';
import type { OpticsPsf, Scene } from './scene.ts';
import { SPACING_ASTIGMATISM, SPACING_CURVATURE } from './scene.ts';

/** FWHM / sigma of a Gaussian, 2 sqrt(2 ln 2) (optics.md §1.1). */
export const GAUSS_FWHM_PER_SIGMA = 2 * Math.sqrt(2 * Math.LN2);

/** Moffat core width α from FWHM: FWHM = 2α sqrt(2^(1/β) - 1) (Moffat 1969; optics.md §1.1). */
export function moffatAlpha(fwhm: number, beta: number): number {
  return fwhm / (2 * Math.sqrt(Math.pow(2, 1 / beta) - 1));
}

export const SEEING_NONE = 0;
export const SEEING_GAUSSIAN = 1;
export const SEEING_MOFFAT = 2;

/** Everything needed to draw the rays of one star, in pixels, relative to its nominal position. */
export interface RayModel {
  /** Central obstruction ratio ε. */
  obstruction: number;
  /** Pupil-to-offset scale across / along the radius: -δ_s/(2N p), -δ_t/(2N p), px per unit pupil radius. */
  sagPx: number;
  tanPx: number;
  /** Unit vector from the optical centre to the star. */
  radialX: number;
  radialY: number;
  /** Sagittal coma S, px (negative: flare toward -comaDir). */
  comaPx: number;
  /** Spherical aberration as L/(2N p), px: the marginal ray's miss at the paraxial focus (TSA). */
  sphericalPx: number;
  /** Unit vector from the coma centre to the star. */
  comaDirX: number;
  comaDirY: number;
  seeing: number;
  seeingSigmaPx: number;
  seeingAlphaPx: number;
  seeingBeta: number;
  /** Full trail vector, px (the trail is centred on the mid-exposure position). */
  trailX: number;
  trailY: number;
  /** Total rotation during the exposure, rad, and the arm (star - rotation centre), px. */
  rotAngle: number;
  rotArmX: number;
  rotArmY: number;
}

export function emptyRayModel(): RayModel {
  return {
    obstruction: 0, sagPx: 0, tanPx: 0, radialX: 1, radialY: 0, comaPx: 0, comaDirX: 1, comaDirY: 0, sphericalPx: 0,
    seeing: SEEING_NONE, seeingSigmaPx: 0, seeingAlphaPx: 0, seeingBeta: 0,
    trailX: 0, trailY: 0, rotAngle: 0, rotArmX: 0, rotArmY: 0,
  };
}

const PUPIL_STEP = 2 / 65536;
const EMPTY = new Float64Array(2);

/**
 * q(u) = u^(1/(1-β)) - 1 tabulated on u = i/8192 for linear interpolation where it is
 * smooth (u >= 1/64; relative error < 2e-4 for β >= 1.5, ~1e-5 for β >= 2.5); below that,
 * the exact power. Replaces a pow per photon.
 */
const MOFFAT_TN = 8192;
const MOFFAT_EXACT_BELOW = 1 / 64;
const MOFFAT_INV = new Map<number, Float64Array>();
function moffatInverseTable(beta: number): Float64Array {
  let t = MOFFAT_INV.get(beta);
  if (!t) {
    t = new Float64Array(MOFFAT_TN + 2);
    const e = 1 / (1 - beta);
    t[0] = Infinity;
    for (let i = 1; i <= MOFFAT_TN + 1; i++) t[i] = Math.pow(i / MOFFAT_TN, e) - 1;
    if (MOFFAT_INV.size > 256) MOFFAT_INV.clear();
    MOFFAT_INV.set(beta, t);
  }
  return t;
}

/**
 * Draws n ray offsets (px, from the nominal star position) into dx, dy.
 * Pupil points by rejection from the square (no trigonometry, 16-bit coordinates); seeing by the
 * ziggurat normal (Marsaglia & Tsang 2000) or the Moffat inverse CDF r = α sqrt(u^(1/(1-β)) - 1), from
 * F(<r) = 1 - (1 + r^2/α^2)^(1-β) (optics.md §1.1; Trujillo et al. 2001).
 */
export function sampleOffsets(m: RayModel, rng: Rng, n: number, dx: Float64Array, dy: Float64Array): void {
  const eps2 = m.obstruction * m.obstruction;
  const sag = m.sagPx, dtan = m.tanPx - m.sagPx;
  const ux = m.radialX, uy = m.radialY;
  const S = m.comaPx, cx = m.comaDirX, cy = m.comaDirY;
  const sph = m.sphericalPx;
  const hasOptics = sag !== 0 || dtan !== 0 || S !== 0 || sph !== 0;
  const seeing = m.seeing;
  const sig = m.seeingSigmaPx;
  const alpha = m.seeingAlphaPx;
  const invOneMinusBeta = 1 / (1 - m.seeingBeta);
  const mt = seeing === SEEING_MOFFAT ? moffatInverseTable(m.seeingBeta) : EMPTY;
  const tx = m.trailX, ty = m.trailY;
  const rotA = m.rotAngle, ax = m.rotArmX, ay = m.rotArmY;
  const hasTime = tx !== 0 || ty !== 0 || rotA !== 0;
  for (let i = 0; i < n; i++) {
    let ox = 0, oy = 0;
    if (hasOptics) {
      // Both pupil coordinates from one 32-bit draw, 16 bits each (steps of 6e-5 of the pupil radius).
      let a: number, b: number, r2: number;
      do {
        const u = rng.u32();
        a = ((u & 0xffff) + 0.5) * PUPIL_STEP - 1;
        b = ((u >>> 16) + 0.5) * PUPIL_STEP - 1;
        r2 = a * a + b * b;
      } while (r2 > 1 || r2 < eps2);
      // Defocus + astigmatism.
      const pr = a * ux + b * uy;
      ox = sag * a + dtan * pr * ux;
      oy = sag * b + dtan * pr * uy;
      if (sph !== 0) {
        ox += sph * r2 * a;
        oy += sph * r2 * b;
      }
      if (S !== 0) {
        const pa = a * cx + b * cy; // along the coma direction
        const pb = -a * cy + b * cx; // across it
        const along = S * (3 * pa * pa + pb * pb);
        const across = S * 2 * pa * pb;
        ox += along * cx - across * cy;
        oy += along * cy + across * cx;
      }
    }
    if (seeing === SEEING_GAUSSIAN) {
      ox += sig * rng.normal();
      oy += sig * rng.normal();
    } else if (seeing === SEEING_MOFFAT) {
      // A point uniform in the unit disk gives both the direction and u = |P|^2, uniform on
      // (0, 1) and independent of it; then r^2/α^2 = u^(1/(1-β)) - 1 (inverse of 1 - F(<r) = u).
      let a: number, b: number, u: number;
      do {
        const w = rng.u32();
        a = ((w & 0xffff) + 0.5) * PUPIL_STEP - 1;
        b = ((w >>> 16) + 0.5) * PUPIL_STEP - 1;
        u = a * a + b * b;
      } while (u >= 1);
      let q: number;
      if (u < MOFFAT_EXACT_BELOW) q = Math.pow(u, invOneMinusBeta) - 1;
      else {
        const xi = u * MOFFAT_TN, i0 = xi | 0;
        q = mt[i0] + (xi - i0) * (mt[i0 + 1] - mt[i0]);
      }
      const f = alpha * Math.sqrt(q / u);
      ox += a * f;
      oy += b * f;
    }
    if (hasTime) {
      const s = rng.uniform() - 0.5;
      ox += s * tx;
      oy += s * ty;
      if (rotA !== 0) {
        const ang = s * rotA;
        const sh = Math.sin(ang / 2);
        const c = -2 * sh * sh, sn = Math.sin(ang); // cos - 1 without cancellation
        ox += c * ax - sn * ay;
        oy += sn * ax + c * ay;
      }
    }
    dx[i] = ox;
    dy[i] = oy;
  }
}

/** Mean and covariance (px, px^2) of a RayModel's offsets, exact, without seeing and without the pixel box. */
export interface OffsetMoments {
  meanX: number;
  meanY: number;
  xx: number;
  yy: number;
  xy: number;
}

/**
 * Exact moments of the geometric part. Defocus/astigmatism and spherical (odd in P) and coma
 * (even in P) are uncorrelated over a pupil symmetric under P -> -P, and the time part is
 * independent of the pupil, so the covariances add. Uniform annulus: E[P P^T] =
 * (1+ε^2)/4 I, E[ρ^4] = (1+ε^2+ε^4)/3, E[ρ^6] = (1+ε^2+ε^4+ε^6)/4 [DER]; the spherical term
 * s ρ^2 P adds s (M E[ρ^4] + s E[ρ^6]/2) per axis pair (cross term with M P, and its own);
 * coma: mean S(1+ε^2) along û_c, variances
 * S^2 (4.5 E[ρ^4] - (1+ε^2)^2) along and 0.5 S^2 E[ρ^4] across (S^2/2, S^2/6 at ε = 0,
 * optics.md §1.5).
 */
export function geometricMoments(m: RayModel): OffsetMoments {
  const e2 = m.obstruction * m.obstruction;
  const pp = (1 + e2) / 4;
  const r4 = (1 + e2 + e2 * e2) / 3;
  // Defocus/astigmatism: offset = M P with M = sag I + (tan - sag) u u^T; cov = pp M^2.
  const d = m.tanPx - m.sagPx;
  const ux = m.radialX, uy = m.radialY;
  const m11 = m.sagPx + d * ux * ux, m22 = m.sagPx + d * uy * uy, m12 = d * ux * uy;
  let xx = pp * (m11 * m11 + m12 * m12);
  let yy = pp * (m12 * m12 + m22 * m22);
  let xy = pp * (m11 * m12 + m12 * m22);
  // Spherical: cov(M P, s ρ^2 P) = s M E[ρ^2 P P^T] = s M E[ρ^4]/2, twice (both orders); own s^2 E[ρ^6]/2.
  const sp = m.sphericalPx;
  if (sp !== 0) {
    const r6 = (1 + e2 + e2 * e2 + e2 * e2 * e2) / 4;
    xx += sp * r4 * m11 + 0.5 * sp * sp * r6;
    yy += sp * r4 * m22 + 0.5 * sp * sp * r6;
    xy += sp * r4 * m12;
  }
  // Coma.
  const S = m.comaPx, cx = m.comaDirX, cy = m.comaDirY;
  let meanX = S * (1 + e2) * cx;
  let meanY = S * (1 + e2) * cy;
  const vAlong = S * S * (4.5 * r4 - (1 + e2) * (1 + e2));
  const vAcross = 0.5 * S * S * r4;
  xx += vAlong * cx * cx + vAcross * cy * cy;
  yy += vAlong * cy * cy + vAcross * cx * cx;
  xy += (vAlong - vAcross) * cx * cy;
  // Trail and rotation share the time s, uniform on [-1/2, 1/2]: 16-point Gauss-Legendre,
  // exact for the polynomial trail terms and to rounding for cos/sin of |angle| <= 0.5 rad.
  if (m.trailX !== 0 || m.trailY !== 0 || m.rotAngle !== 0) {
    const g = glNodes(16);
    let sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0;
    for (let k = 0; k < 16; k++) {
      const s = g.t[k], w = g.w[k];
      const ang = s * m.rotAngle;
      // cos - 1 as -2 sin^2(ang/2): no cancellation for small angles.
      const sh = Math.sin(ang / 2);
      const c = -2 * sh * sh, sn = Math.sin(ang);
      const ox = s * m.trailX + c * m.rotArmX - sn * m.rotArmY;
      const oy = s * m.trailY + sn * m.rotArmX + c * m.rotArmY;
      sx += w * ox; sy += w * oy; sxx += w * ox * ox; syy += w * oy * oy; sxy += w * ox * oy;
    }
    meanX += sx;
    meanY += sy;
    xx += sxx - sx * sx;
    yy += syy - sy * sy;
    xy += sxy - sx * sy;
  }
  return { meanX, meanY, xx, yy, xy };
}

/** Per-axis variance of the seeing profile, px^2 (Moffat: α^2/(β-2), infinite for β <= 2; optics.md §1.1). */
export function seeingVariance(m: RayModel): number {
  if (m.seeing === SEEING_GAUSSIAN) return m.seeingSigmaPx * m.seeingSigmaPx;
  if (m.seeing === SEEING_MOFFAT) return m.seeingBeta > 2 ? (m.seeingAlphaPx * m.seeingAlphaPx) / (m.seeingBeta - 2) : Infinity;
  return 0;
}

// ---------------------------------------------------------------------------
// The field: scene aberration coefficients -> one star's local optics.

/** Scene-wide coefficients derived once. */
export interface OpticsField {
  readonly pixelMm: number;
  readonly fNumber: number;
  readonly obstruction: number;
  readonly opticalCenterPx: { x: number; y: number };
  readonly comaCenterPx: { x: number; y: number };
  readonly rotationCenterPx: { x: number; y: number };
  /** Focus at the optical centre, µm. */
  readonly defocusCenterUm: number;
  /** Tilt slopes, µm per mm (= mrad). */
  readonly tiltXUmPerMm: number;
  readonly tiltYUmPerMm: number;
  /** Medial curvature coefficient c, µm/mm^2: from curvatureRadiusMm (500/R) and from the spacing model. */
  readonly curvatureUmPerMm2: number;
  readonly curvatureFromRadiusUmPerMm2: number;
  readonly curvatureFromSpacingUmPerMm2: number;
  /** S-T separation coefficient, µm/mm^2: the scene's plus the spacing model's. */
  readonly astigmatismUmPerMm2: number;
  readonly astigmatismFromSpacingUmPerMm2: number;
  readonly comaUmPerMm: number;
  /** Longitudinal spherical aberration at this f-number, µm (marginal minus paraxial focus; < 0 under-corrected). */
  readonly sphericalUm: number;
  readonly seeing: number;
  readonly seeingSigmaPx: number;
  readonly seeingAlphaPx: number;
  readonly seeingBeta: number;
  readonly trailXPx: number;
  readonly trailYPx: number;
  readonly rotationAngleRad: number;
}

/**
 * Longitudinal spherical aberration at f-number N of a lens that has lsaUm at refN: zone heights
 * scale as refN/N and the zone focus shift as height^2, so LSA scales as (refN/N)^2 and the
 * transverse aberration LSA/(2N) as (refN/N)^3 (optics.md §3, aperture scaling of spherical).
 */
export function effectiveSphericalUm(lsaUm: number, refN: number | null, N: number): number {
  return refN === null ? lsaUm : lsaUm * (refN / N) ** 2;
}

export function opticsField(scene: Scene, psf: OpticsPsf): OpticsField {
  const frameCentre = { x: (scene.width - 1) / 2, y: (scene.height - 1) / 2 };
  const a = psf.aberrations;
  const pixelMm = scene.optics.pixelSizeUm / 1000;
  const oc = a.opticalCenterPx ?? frameCentre;
  // δ = h^2/(2R) with h, R in mm -> 1000/(2R) µm per mm^2 (optics.md §3, field curvature).
  const cR = a.curvatureRadiusMm === null ? 0 : 500 / a.curvatureRadiusMm;
  const cS = SPACING_CURVATURE * a.spacingErrorMm;
  const kS = SPACING_ASTIGMATISM * Math.abs(a.spacingErrorMm);
  const s = psf.seeing;
  const seeing = s.fwhmPx <= 0 ? SEEING_NONE : s.model === 'gaussian' ? SEEING_GAUSSIAN : SEEING_MOFFAT;
  const th = (psf.trailing.angleDeg * Math.PI) / 180;
  return {
    pixelMm,
    fNumber: scene.optics.fNumber,
    obstruction: scene.optics.obstruction,
    opticalCenterPx: oc,
    comaCenterPx: a.comaCenterPx ?? oc,
    rotationCenterPx: psf.rotation.centerPx ?? frameCentre,
    defocusCenterUm: a.defocusCenterUm,
    tiltXUmPerMm: a.tiltXUmAcross / (scene.width * pixelMm),
    tiltYUmPerMm: a.tiltYUmAcross / (scene.height * pixelMm),
    curvatureUmPerMm2: cR + cS,
    curvatureFromRadiusUmPerMm2: cR,
    curvatureFromSpacingUmPerMm2: cS,
    astigmatismUmPerMm2: a.astigmatismUmPerMm2 + kS,
    astigmatismFromSpacingUmPerMm2: kS,
    comaUmPerMm: a.comaUmPerMm,
    sphericalUm: effectiveSphericalUm(a.sphericalUm, a.sphericalFNumber, scene.optics.fNumber),
    seeing,
    seeingSigmaPx: seeing === SEEING_GAUSSIAN ? s.fwhmPx / GAUSS_FWHM_PER_SIGMA : 0,
    seeingAlphaPx: seeing === SEEING_MOFFAT ? moffatAlpha(s.fwhmPx, s.beta) : 0,
    seeingBeta: s.beta,
    trailXPx: psf.trailing.lengthPx * Math.cos(th),
    trailYPx: psf.trailing.lengthPx * Math.sin(th),
    rotationAngleRad: psf.rotation.angleRad,
  };
}

/** The physical description of one star's local optics (the truth), plus its ray model. */
export interface LocalOptics {
  /** Distance from the optical centre, mm, and position angle about it, degrees. */
  radiusMm: number;
  positionAngleDeg: number;
  /** Medial, sagittal and tangential focus errors, µm. */
  defocusUm: number;
  defocusSagittalUm: number;
  defocusTangentialUm: number;
  /** S-T separation Δz_ast, µm. */
  astigmatismUm: number;
  /** Geometric blur extents: |δ_t|/N along and |δ_s|/N across the radius, px; |δ|/N medial disk. */
  blurRadialPx: number;
  blurTangentialPx: number;
  defocusDiskPx: number;
  /** Sagittal coma S >= 0, px, and the flare direction, degrees from +x toward +y. */
  comaSagittalPx: number;
  comaTailAngleDeg: number;
  rays: RayModel;
}

export function localOptics(f: OpticsField, x: number, y: number): LocalOptics {
  const p = f.pixelMm;
  const hx = (x - f.opticalCenterPx.x) * p, hy = (y - f.opticalCenterPx.y) * p;
  const h2 = hx * hx + hy * hy;
  const h = Math.sqrt(h2);
  const delta = f.defocusCenterUm + f.tiltXUmPerMm * hx + f.tiltYUmPerMm * hy + f.curvatureUmPerMm2 * h2;
  const dz = f.astigmatismUmPerMm2 * h2;
  const ds = delta - dz / 2, dt = delta + dz / 2;
  const N = f.fNumber;
  const pUm = p * 1000;
  const cxMm = (x - f.comaCenterPx.x) * p, cyMm = (y - f.comaCenterPx.y) * p;
  const hc = Math.hypot(cxMm, cyMm);
  const SUm = f.comaUmPerMm * hc;
  const rays = emptyRayModel();
  rays.obstruction = f.obstruction;
  rays.sagPx = -ds / (2 * N * pUm);
  rays.tanPx = -dt / (2 * N * pUm);
  if (h > 0) { rays.radialX = hx / h; rays.radialY = hy / h; }
  if (hc > 0) { rays.comaDirX = cxMm / hc; rays.comaDirY = cyMm / hc; }
  rays.comaPx = SUm / pUm;
  rays.sphericalPx = f.sphericalUm / (2 * N * pUm);
  rays.seeing = f.seeing;
  rays.seeingSigmaPx = f.seeingSigmaPx;
  rays.seeingAlphaPx = f.seeingAlphaPx;
  rays.seeingBeta = f.seeingBeta;
  rays.trailX = f.trailXPx;
  rays.trailY = f.trailYPx;
  rays.rotAngle = f.rotationAngleRad;
  rays.rotArmX = x - f.rotationCenterPx.x;
  rays.rotArmY = y - f.rotationCenterPx.y;
  const tail = Math.sign(SUm);
  return {
    radiusMm: h,
    positionAngleDeg: (Math.atan2(hy, hx) * 180) / Math.PI,
    defocusUm: delta,
    defocusSagittalUm: ds,
    defocusTangentialUm: dt,
    astigmatismUm: dz,
    blurRadialPx: Math.abs(dt) / N / pUm,
    blurTangentialPx: Math.abs(ds) / N / pUm,
    defocusDiskPx: Math.abs(delta) / N / pUm,
    comaSagittalPx: Math.abs(SUm) / pUm,
    comaTailAngleDeg: tail === 0 ? 0 : (Math.atan2(tail * rays.comaDirY, tail * rays.comaDirX) * 180) / Math.PI,
    rays,
  };
}
