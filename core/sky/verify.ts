/**
 * Verification of a proposed placement with an explicit false-positive bound (the Bayesian
 * decision of Lang et al. 2010, AJ 139, 1782, section 2.4, after Valdes et al. 1995, PASP 107,
 * 1119). Under the hypothesis "right placement", each field star is either one of the N_ref
 * catalogue stars predicted in the frame, seen at its predicted position with Gaussian scatter
 * sigma_i, or a distractor anywhere in the frame (probability d); under "unrelated dots" it is
 * anywhere in the frame of area A. The likelihood ratio of one star is
 *   L_i = d + (1 - d) (A / N_ref) N(r_i; sigma_i),
 * with r_i the distance to the unclaimed predicted star of largest term (the largest term of the
 * mixture, which can only lower the ratio), and sigma set by the predicted star (so each Gaussian
 * integrates to 1 over the plane). Every L_i integrates to at most 1 over the frame, so under
 * "unrelated dots" the running product of independent L_i has expectation <= 1 at every step and,
 * by Ville's maximal inequality for such products, exceeds T at any step with probability
 * <= 1 / T. The stars that proposed the placement are left out. With H placements tried, the
 * chance of accepting any placement for a frame of unrelated dots is at most H / T.
 */

export interface VerifyInput {
  /** Field stars in order of brightness (those that proposed the placement left out). */
  fx: Float64Array;
  fy: Float64Array;
  nField: number;
  /** Predicted positions of the catalogue stars in the frame, and their scatter under the placement, px. */
  rx: Float64Array;
  ry: Float64Array;
  sigma: Float64Array;
  nRef: number;
  /** Frame area, px^2. */
  area: number;
  /** Accept at this natural log of the ratio; reject below `reject` (a shortcut, never an acceptance). */
  accept: number;
  reject: number;
}

export interface VerifyResult {
  logOdds: number;
  accepted: boolean;
  matched: number;
  tested: number;
}

/** Distractor fraction: at least 1/4, and at least the share of field stars that cannot all be predicted. */
export function distractorFraction(nField: number, nRef: number): number {
  return Math.max(0.25, Math.min(0.95, 1 - nRef / Math.max(1, nField)));
}

const claimedScratch = { buf: new Uint8Array(256) };

export function verifyPlacement(v: VerifyInput): VerifyResult {
  if (v.nRef === 0 || v.nField === 0) return { logOdds: 0, accepted: false, matched: 0, tested: 0 };
  if (claimedScratch.buf.length < v.nRef) claimedScratch.buf = new Uint8Array(2 * v.nRef);
  const claimed = claimedScratch.buf;
  claimed.fill(0, 0, v.nRef);
  const d = distractorFraction(v.nField, v.nRef);
  const lnD = Math.log(d);
  const w = ((1 - d) * v.area) / v.nRef;
  let lo = 0;
  let matched = 0;
  let i = 0;
  for (; i < v.nField; i++) {
    const x = v.fx[i], y = v.fy[i];
    let best = -1, bestG = 0;
    for (let j = 0; j < v.nRef; j++) {
      if (claimed[j]) continue;
      const s = v.sigma[j];
      const dx = v.rx[j] - x, dy = v.ry[j] - y;
      const d2 = dx * dx + dy * dy;
      if (d2 > 36 * s * s) continue; // beyond 6 sigma the term is below e^-18 of its peak
      const g = Math.exp(-d2 / (2 * s * s)) / (2 * Math.PI * s * s);
      if (g > bestG) { bestG = g; best = j; }
    }
    if (best >= 0) {
      const term = d + w * bestG;
      if (term > 1) { claimed[best] = 1; matched++; }
      lo += Math.log(term);
    } else {
      lo += lnD;
    }
    if (lo >= v.accept) return { logOdds: lo, accepted: true, matched, tested: i + 1 };
    if (lo < v.reject) return { logOdds: lo, accepted: false, matched, tested: i + 1 };
  }
  return { logOdds: lo, accepted: lo >= v.accept, matched, tested: i };
}
