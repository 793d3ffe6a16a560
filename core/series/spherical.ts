/**
 * Spherical aberration from a focus series. The pupil's zones focus at different distances (zone
 * u = ρ^2 at L u beyond the paraxial focus, L the longitudinal spherical aberration), so the light
 * near the centre of a defocused disc (from the inner zones) and the light at its rim (outer
 * zones) are sharpest at different focuser positions, and the discs look different on the two
 * sides of focus: an under-corrected beam (L < 0, marginal rays focusing nearer the lens) shows a
 * bright rim inside focus and a soft edge outside it (the star test; Suiter, *Star Testing
 * Astronomical Telescopes* [MEM]).
 *
 * The radii holding 20, 50 and 80 % of the light (profile.ts) of groups of stars near the frame
 * centre, each group's stars sharing nearly one best focus, are fitted over all frames at once by
 * the ring model (ring-model.ts): the rays of each pupil zone blurred by a core that is the same
 * for every group in one exposure. Parameters: L; the blur scale κ = 1/(2N p) (free, so the
 * focuser's travel need not equal the focal shift and the f-number need not be known); each
 * group's paraxial focus; each frame's core width; and a halo
 * (a fraction of the core's light in a wider Gaussian, for seeing wings such as a Moffat
 * profile's), with weak priors that keep it defined when the data do not need it.
 * Levenberg-Marquardt (core/field/lsq.ts) from several starting values of L; the error of L from
 * the covariance, scaled up by the reduced chi^2 when the model misses the data.
 */
import { levenbergMarquardt } from '../field/lsq.ts';
import { median } from '../field/stats.ts';
import { pupilZones, ringFraction, solveIncreasing } from './ring-model.ts';

/** A group of stars with (nearly) the same best focus. */
export interface SphericalGroupData {
  /** Per frame: the median radii (px) holding the fractions, and their errors; NaN = none. */
  readonly radii: readonly (readonly number[])[];
  readonly errs: readonly (readonly number[])[];
  /** A starting guess of this group's best focus (from the focus surface). */
  readonly focusGuess: number;
}

export interface SphericalInput {
  readonly positions: readonly number[];
  readonly fractions: readonly number[];
  readonly groups: readonly SphericalGroupData[];
  readonly obstruction: number;
  /** Starting blur scale, px per unit of position (e.g. the HFD curve's asymptotic slope / sqrt(1/2)). */
  readonly kappaGuess: number;
}

export interface SphericalFit {
  /** Longitudinal spherical aberration (marginal minus paraxial focus), positions' units. */
  longitudinal: number;
  /** Its error: the fit's, scaled by the reduced chi^2, with a systematic floor (see below). */
  longitudinalErr: number;
  statisticalErr: number;
  /** Blur scale 1/(2Np) per unit of position, px, and its error. */
  kappa: number;
  kappaErr: number;
  /** Paraxial focus of each group. */
  paraxialFocus: number[];
  /** Core standard deviation per frame, px. */
  coreSigmaPx: number[];
  halo: { weight: number; widthRatio: number };
  chi2: number;
  dof: number;
  errorScale: number;
}

const NZONES = 64;
const PRIOR_Q = { mean: 0, sd: 2 };
const PRIOR_V = { mean: -1, sd: 2 };
const sigmoid = (v: number) => 1 / (1 + Math.exp(-v));

interface Params {
  L: number;
  kappa: number;
  F: number;
  sigma: number;
  w: number;
  ratio: number;
}

/** Radii holding the fractions for one zone and frame under the model. */
function radiiOf(pr: Params, P: number, u: Float64Array, fractions: readonly number[], alpha1: Float64Array, alpha2: Float64Array): number[] {
  const s1 = Math.max(1e-3, pr.sigma), s2 = s1 * pr.ratio;
  let amax = 0;
  for (let k = 0; k < u.length; k++) {
    const a = pr.kappa * Math.abs(P - pr.F - pr.L * u[k]) * Math.sqrt(u[k]);
    alpha1[k] = a / s1;
    alpha2[k] = a / s2;
    if (a > amax) amax = a;
  }
  const w = pr.w, n = u.length;
  const frac = (r: number) => {
    const b1 = r / s1, b2 = r / s2;
    let acc = 0;
    for (let k = 0; k < n; k++) acc += (1 - w) * ringFraction(alpha1[k], b1) + w * ringFraction(alpha2[k], b2);
    return acc / n;
  };
  return fractions.map((f) => solveIncreasing(frac, f, 0, amax + 7 * s2));
}

export function fitSpherical(input: SphericalInput): SphericalFit | null {
  const { positions, fractions, groups: zones } = input;
  const nf = positions.length, nz = zones.length, nr = fractions.length;
  if (nz === 0 || nf < 3) return null;
  const u = pupilZones(input.obstruction, NZONES);
  const a1 = new Float64Array(NZONES), a2 = new Float64Array(NZONES);
  // Parameter vector: L, log kappa, halo v, halo q, F_z (nz), log sigma_f (nf).
  const G = 4;
  const np = G + nz + nf;
  const rowsY: number[] = [], rowsW: number[] = [], rowZ: number[] = [], rowF: number[] = [], rowR: number[] = [];
  zones.forEach((z, zi) => {
    for (let f = 0; f < nf; f++) {
      for (let r = 0; r < nr; r++) {
        const v = z.radii[f]?.[r], e = z.errs[f]?.[r];
        if (!Number.isFinite(v) || !(e > 0)) continue;
        rowsY.push(v); rowsW.push(1 / (e * e)); rowZ.push(zi); rowF.push(f); rowR.push(r);
      }
    }
  });
  const n = rowsY.length;
  if (n < np + 2) return null;
  const unpack = (p: Float64Array, zi: number, f: number): Params => ({
    L: p[0], kappa: Math.exp(p[1]), w: 0.8 * sigmoid(p[2]), ratio: 1 + 3 * sigmoid(p[3]), F: p[G + zi], sigma: Math.exp(p[G + nz + f]),
  });
  // Rows grouped by (zone, frame): one model evaluation gives all fractions.
  const groups = new Map<number, number[]>();
  for (let i = 0; i < n; i++) {
    const k = rowZ[i] * nf + rowF[i];
    const g = groups.get(k);
    if (g) g.push(i); else groups.set(k, [i]);
  }
  const steps = [0.02, 1e-4, 1e-3, 1e-3];
  const batch = (p: Float64Array, M: Float64Array | null, g: Float64Array | null): number => {
    let chi2 = 0;
    for (const [k, idx] of groups) {
      const zi = Math.floor(k / nf), f = k % nf;
      const base = radiiOf(unpack(p, zi, f), positions[f], u, fractions, a1, a2);
      const cols = [0, 1, 2, 3, G + zi, G + nz + f];
      let J: number[][] = [];
      if (M) {
        J = cols.map((c) => {
          const h = c < G ? steps[c] * (c === 0 ? Math.max(1, Math.abs(p[0]) * 0.01) : 1) : c < G + nz ? 0.02 : 1e-3;
          const q = Float64Array.from(p);
          q[c] += h;
          const r1 = radiiOf(unpack(q, zi, f), positions[f], u, fractions, a1, a2);
          return r1.map((v, j) => (v - base[j]) / h);
        });
      }
      for (const i of idx) {
        const res = rowsY[i] - base[rowR[i]];
        const w = rowsW[i];
        chi2 += w * res * res;
        if (M && g) {
          for (let a = 0; a < cols.length; a++) {
            const ja = J[a][rowR[i]] * w;
            g[cols[a]] += ja * res;
            for (let b = 0; b < cols.length; b++) {
              if (cols[b] <= cols[a]) M[cols[a] * np + cols[b]] += ja * J[b][rowR[i]];
            }
          }
        }
      }
    }
    // Weak priors on the halo's shape (pseudo-observations).
    for (const [c, pr] of [[2, PRIOR_V], [3, PRIOR_Q]] as const) {
      const res = pr.mean - p[c];
      const w = 1 / (pr.sd * pr.sd);
      chi2 += w * res * res;
      if (M && g) { g[c] += w * res; M[c * np + c] += w; }
    }
    return chi2;
  };
  // Starts: the zones' HFD vertices shifted by the spherical term's own offset (about L/2), several L.
  const span = Math.max(...positions) - Math.min(...positions);
  const sig0 = Math.max(0.5, Math.min(...zones.flatMap((z) => z.radii.map((r) => r[0]).filter(Number.isFinite))) / 0.67);
  let best: { params: Float64Array; chi2: number; covUnit: Float64Array | null } | null = null;
  const problem = { n, y: Float64Array.from(rowsY), w: Float64Array.from(rowsW), model: () => 0, batch };
  // A few steps from each start; the best one is then run to convergence.
  for (const frac of [-0.3, 0, 0.3]) {
    const L0 = frac * span;
    const start = new Float64Array(np);
    start[0] = L0;
    start[1] = Math.log(Math.max(1e-6, input.kappaGuess));
    start[2] = PRIOR_V.mean;
    start[3] = PRIOR_Q.mean;
    zones.forEach((z, zi) => { start[G + zi] = z.focusGuess - 0.5 * L0; });
    for (let f = 0; f < nf; f++) start[G + nz + f] = Math.log(sig0);
    const r = levenbergMarquardt(problem, start, 12);
    if (!best || r.chi2 < best.chi2) best = r;
  }
  if (!best) return null;
  best = levenbergMarquardt(problem, best.params, 80);
  const p = best.params;
  const dof = n - np;
  const scale2 = dof > 0 ? Math.max(1, best.chi2 / dof) : 1;
  const cov = best.covUnit;
  const kappa = Math.exp(p[1]);
  // Systematic floor: the core is a model (a Gaussian and a halo), and the pooled radii carry what
  // is left of the stars' spread of foci; asymmetries finer than a tenth of the core's width (as a
  // focus shift, sigma / kappa) and 3 % of L are not trusted. On rendered series without spherical
  // aberration the fit gave up to 2.8 times its statistical error; with this floor, under 1.5.
  const coreUm = median(Array.from({ length: nf }, (_, f) => Math.exp(p[G + nz + f]))) / Math.exp(p[1]);
  const stat2 = cov ? Math.max(0, cov[0] * scale2) : NaN;
  return {
    longitudinal: p[0],
    longitudinalErr: Math.sqrt(stat2 + (0.1 * coreUm) ** 2 + (0.03 * p[0]) ** 2),
    statisticalErr: Math.sqrt(stat2),
    kappa,
    kappaErr: cov ? kappa * Math.sqrt(Math.max(0, cov[np + 1] * scale2)) : NaN,
    paraxialFocus: zones.map((_, zi) => p[G + zi]),
    coreSigmaPx: Array.from({ length: nf }, (_, f) => Math.exp(p[G + nz + f])),
    halo: { weight: 0.8 * sigmoid(p[2]), widthRatio: 1 + 3 * sigmoid(p[3]) },
    chi2: best.chi2,
    dof,
    errorScale: Math.sqrt(scale2),
  };
}
