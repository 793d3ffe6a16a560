/**
 * The radial light distribution of a defocused, spherically aberrated star: the geometric rays
 * of each pupil zone form a ring, blurred by a circular Gaussian core (seeing, the in-focus
 * image, the pixel). Used by the through-focus series to read spherical aberration from the
 * radii that hold given fractions of the light.
 *
 * Geometry (optics.md §3, ε = -2N ∂W/∂ρ with W = W020 ρ^2 + W040 ρ^4): pupil zone u = ρ^2
 * (uniform on [ε^2, 1] for an annular pupil) reaches a sensor δ from the paraxial focus at
 * radius |δ - L u| sqrt(u) / (2N), where L is the longitudinal spherical aberration (marginal
 * minus paraxial focus). In pixels, with κ = 1 / (2 N p): a(u) = κ |δ - L u| sqrt(u).
 *
 * A ring of radius a blurred by a circular Gaussian of standard deviation s puts the fraction
 * P(a/s, r/s) of its light inside radius r, with P(α, β) = 1 - Q1(α, β), Q1 the Marcum Q
 * function (the Rice distribution's CDF; Rice 1944): P = ∫_0^β t exp(-(t^2 + α^2)/2) I0(α t) dt.
 */

/**
 * exp(-x) I0(x), x >= 0: Abramowitz & Stegun 9.8.1 (|x| <= 3.75, error < 1.6e-7) and 9.8.2
 * (x >= 3.75, error < 1.9e-7 relative to the scaled value).
 */
export function besselI0Scaled(x: number): number {
  const ax = Math.abs(x);
  if (ax <= 3.75) {
    const t = (ax / 3.75) ** 2;
    const i0 = 1 + t * (3.5156229 + t * (3.0899424 + t * (1.2067492 + t * (0.2659732 + t * (0.0360768 + t * 0.0045813)))));
    return i0 * Math.exp(-ax);
  }
  const t = 3.75 / ax;
  const p = 0.39894228 + t * (0.01328592 + t * (0.00225319 + t * (-0.00157565 + t * (0.00916281
    + t * (-0.02057706 + t * (0.02635537 + t * (-0.01647633 + t * 0.00392377)))))));
  return p / Math.sqrt(ax);
}

const H = 0.02;
const A_MAX = 12;
const B_MAX = 16;
const NA = Math.round(A_MAX / H) + 1;
const NB = Math.round(B_MAX / H) + 1;
let table: Float32Array | null = null;

/**
 * The table of P(α, β) on a 0.02 grid (α <= 12, β <= 16), by the trapezoid rule in t on a
 * 0.005 grid (the integrand is smooth, about one unit wide; error below 1e-6).
 */
function ringTable(): Float32Array {
  if (table) return table;
  const t = new Float32Array(NA * NB);
  const sub = 4;
  const h = H / sub;
  for (let i = 0; i < NA; i++) {
    const a = i * H;
    // integrand t exp(-(t - a)^2 / 2) [exp(-a t) I0(a t)]
    const f = (x: number) => x * Math.exp(-0.5 * (x - a) * (x - a)) * besselI0Scaled(a * x);
    let acc = 0;
    let prev = f(0);
    t[i * NB] = 0;
    for (let j = 1; j < NB; j++) {
      for (let k = 1; k <= sub; k++) {
        const x = ((j - 1) * sub + k) * h;
        const cur = f(x);
        acc += 0.5 * h * (prev + cur);
        prev = cur;
      }
      t[i * NB + j] = Math.min(1, acc);
    }
  }
  table = t;
  return t;
}

/** Standard normal CDF (Abramowitz & Stegun 7.1.26 for erf, error < 1.5e-7). */
function phi(z: number): number {
  const x = Math.abs(z) / Math.SQRT2;
  const k = 1 / (1 + 0.3275911 * x);
  const e = 1 - (((((1.061405429 * k - 1.453152027) * k) + 1.421413741) * k - 0.284496736) * k + 0.254829592) * k * Math.exp(-x * x);
  return z >= 0 ? 0.5 * (1 + e) : 0.5 * (1 - e);
}

/**
 * Fraction of a Gaussian-blurred ring's light inside radius β (both in units of the blur's
 * standard deviation). Beyond the table (α > 12) the Rice distribution is close to a normal of
 * mean sqrt(α^2 + 1) and unit width (error about 1e-3).
 */
export function ringFraction(alpha: number, beta: number): number {
  if (beta <= 0) return 0;
  if (alpha > A_MAX || beta > B_MAX) {
    if (alpha <= A_MAX && beta > B_MAX) return 1;
    return phi(beta - Math.sqrt(alpha * alpha + 1));
  }
  const t = ringTable();
  const fa = alpha / H, fb = beta / H;
  const i = Math.min(NA - 2, Math.floor(fa)), j = Math.min(NB - 2, Math.floor(fb));
  const u = fa - i, v = fb - j;
  const o = i * NB + j;
  return (1 - u) * ((1 - v) * t[o] + v * t[o + 1]) + u * ((1 - v) * t[o + NB] + v * t[o + NB + 1]);
}

/** Pupil zones: midpoints of equal steps in u = ρ^2 over [ε^2, 1] (equal light per zone). */
export function pupilZones(obstruction: number, n = 96): Float64Array {
  const e2 = obstruction * obstruction;
  return Float64Array.from({ length: n }, (_, k) => e2 + ((k + 0.5) / n) * (1 - e2));
}

export interface RingModel {
  /** Focus error from the paraxial focus, in the positions' units (positive = sensor farther from the lens). */
  deltaUm: number;
  /** Longitudinal spherical aberration (marginal minus paraxial focus), same units. */
  sphericalUm: number;
  /** Blur radius per unit of focus error per unit sqrt(u): 1 / (2 N p), px per µm. */
  kappa: number;
  /** Gaussian core standard deviation, px. */
  coreSigmaPx: number;
}

/**
 * Radii (px) holding the given fractions of the light. Zones: the ring radii a(u); the enclosed
 * fraction is the mean of ringFraction over the zones, found by bisection for each fraction.
 */
export function modelRadii(m: RingModel, zones: Float64Array, fractions: readonly number[]): number[] {
  const s = Math.max(1e-3, m.coreSigmaPx);
  const n = zones.length;
  const alpha = new Float64Array(n);
  let amax = 0;
  for (let k = 0; k < n; k++) {
    const u = zones[k];
    alpha[k] = (m.kappa * Math.abs(m.deltaUm - m.sphericalUm * u) * Math.sqrt(u)) / s;
    if (alpha[k] > amax) amax = alpha[k];
  }
  const frac = (beta: number) => {
    let acc = 0;
    for (let k = 0; k < n; k++) acc += ringFraction(alpha[k], beta);
    return acc / n;
  };
  return fractions.map((f) => solveIncreasing(frac, f, 0, amax + 8) * s);
}

/**
 * The x in [lo, hi] where the increasing function g reaches the target: regula falsi with the
 * Illinois modification (Dowell & Jarratt 1971), to 1e-10 of the bracket (finite-difference
 * derivatives of the result need it smooth); bisection steps when it
 * stalls.
 */
export function solveIncreasing(g: (x: number) => number, target: number, lo: number, hi: number): number {
  let a = lo, b = hi;
  let fa = g(a) - target, fb = g(b) - target;
  if (fa >= 0) return a;
  if (fb <= 0) return b;
  const tol = 1e-10 * (hi - lo);
  let side = 0;
  for (let it = 0; it < 60 && b - a > tol; it++) {
    let x = (a * fb - b * fa) / (fb - fa);
    if (!(x > a && x < b) || it % 8 === 7) x = 0.5 * (a + b);
    const fx = g(x) - target;
    if (fx === 0) return x;
    if (fx < 0) {
      a = x; fa = fx;
      if (side === -1) fb *= 0.5;
      side = -1;
    } else {
      b = x; fb = fx;
      if (side === 1) fa *= 0.5;
      side = 1;
    }
    if (Math.abs(fx) < 1e-12) break;
  }
  return fa === fb ? 0.5 * (a + b) : (a * fb - b * fa) / (fb - fa);
}
