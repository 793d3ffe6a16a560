/**
 * Sensor noise: exact Poisson deviates (inversion for small means, Hörmann's
 * PTRS transformed rejection for large ones) and the per-pixel chain
 * electrons -> shot noise -> read noise -> ADU -> bias -> quantisation/saturation.
 */
import type { Rng } from './prng.ts';

/** Stirling-series coefficients B_2k / (2k (2k-1)), k = 1..6 (Abramowitz & Stegun 6.1.40). */
const STIRLING = [1 / 12, -1 / 360, 1 / 1260, -1 / 1680, 1 / 1188, -691 / 360360];
const HALF_LN_2PI = 0.9189385332046728;

/** ln Γ(x) for x > 0: Stirling series after shifting x up to >= 10 (A&S 6.1.40, 6.1.15). */
export function lnGamma(x: number): number {
  let shift = 0;
  while (x < 10) {
    shift += Math.log(x);
    x += 1;
  }
  const r = 1 / (x * x);
  let s = STIRLING[5];
  for (let k = 4; k >= 0; k--) s = s * r + STIRLING[k];
  return (x - 0.5) * Math.log(x) - x + HALF_LN_2PI + s / x - shift;
}

/** ln k! for k < 65536, built on first use (PTRS's slow branch needs it often). */
let LOG_FACT: Float64Array | null = null;
function logFactorial(k: number): number {
  if (k >= 65536) return lnGamma(k + 1);
  if (!LOG_FACT) {
    LOG_FACT = new Float64Array(65536);
    for (let i = 1; i < 65536; i++) LOG_FACT[i] = LOG_FACT[i - 1] + Math.log(i);
  }
  return LOG_FACT[k];
}

/**
 * Poisson deviate with mean mu. mu < 10: sequential search of the CDF (one
 * uniform). mu >= 10: PTRS, W. Hörmann 1993, "The transformed rejection method
 * for generating Poisson random variables", Insurance: Mathematics and
 * Economics 12, 39-45 (constants as published there).
 */
export function poisson(rng: Rng, mu: number): number {
  if (!(mu > 0)) return 0;
  if (mu < 10) {
    const u = rng.uniform();
    let p = Math.exp(-mu);
    let s = p;
    let k = 0;
    // The tail beyond k = 100 has probability below 1e-60 for mu < 10.
    while (u > s && k < 100) {
      k++;
      p *= mu / k;
      s += p;
    }
    return k;
  }
  const b = 0.931 + 2.53 * Math.sqrt(mu);
  const a = -0.059 + 0.02483 * b;
  const vr = 0.9277 - 3.6224 / (b - 2);
  for (;;) {
    const U = rng.uniform() - 0.5;
    const V = rng.uniform();
    const us = 0.5 - Math.abs(U);
    const k = Math.floor(((2 * a) / us + b) * U + mu + 0.43);
    if (us >= 0.07 && V <= vr) return k; // fast acceptance (most draws)
    if (k < 0 || (us < 0.013 && V > us)) continue;
    const lnInvAlpha = Math.log(1.1239 + 1.1328 / (b - 3.4));
    if (Math.log(V) + lnInvAlpha - Math.log(a / (us * us) + b) <= -mu + k * Math.log(mu) - logFactorial(k)) return k;
  }
}

export interface SensorChain {
  /** e- per ADU. */
  readonly gain: number;
  readonly readNoiseE: number;
  readonly biasAdu: number;
  /** Draw Poisson shot noise on the expected electrons (false: keep the expected values). */
  readonly shotNoise: boolean;
  /** Round to integers and clip to [0, saturationAdu]. */
  readonly quantize: boolean;
  readonly saturationAdu: number;
}

/**
 * Turns one row of the frame from electrons into ADU in place. `data` holds the
 * star electrons: expected values when `starsAreCounts` is false (analytic stars,
 * shot noise drawn here on star + sky together), Poisson counts when true
 * (photon-sampled stars; only the sky gets its shot noise here). The sum of
 * independent Poisson variables is Poisson, so both routes give exact shot noise.
 */
export function sensorRow(
  data: Float32Array,
  offset: number,
  skyE: Float64Array,
  n: number,
  starsAreCounts: boolean,
  chain: SensorChain,
  rng: Rng,
): void {
  const invGain = 1 / chain.gain;
  const rn = chain.readNoiseE;
  const bias = chain.biasAdu;
  const sat = chain.saturationAdu;
  const quant = chain.quantize;
  // Electrons first (loop-invariant branches hoisted), then read noise and conversion.
  if (chain.shotNoise) {
    if (starsAreCounts) for (let i = 0; i < n; i++) data[offset + i] += poisson(rng, skyE[i]);
    else for (let i = 0; i < n; i++) data[offset + i] = poisson(rng, skyE[i] + data[offset + i]);
  } else {
    for (let i = 0; i < n; i++) data[offset + i] += skyE[i];
  }
  for (let j = offset, end = offset + n; j < end; j++) {
    let e = data[j];
    if (rn > 0) e += rn * rng.normal();
    let adu = e * invGain + bias;
    if (quant) {
      adu = Math.round(adu);
      if (adu < 0) adu = 0;
      else if (adu > sat) adu = sat;
    }
    data[j] = adu;
  }
}
