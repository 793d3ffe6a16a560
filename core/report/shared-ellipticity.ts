/**
 * The elongation the stars of a zone share: their distortion vectors (e1, e2) averaged, then
 * the modulus, expressed as an ellipticity 1 - b/a. Averaging vectors first lets each star's
 * noise and random directions cancel (optics.md 1.6: "average e1 and e2 over stars in a zone,
 * then take the modulus; never average |e|").
 */

/** Ellipticity 1 - b/a from the distortion |e| (optics.md 1.3: (b/a)^2 = (1 - e)/(1 + e)). */
export function ellipticityFromDistortion(e: number): number {
  const c = Math.min(Math.abs(e), 0.999);
  return 1 - Math.sqrt((1 - c) / (1 + c));
}

/** Modulus of the mean distortion vector of the stars with finite e1, e2; null without any. */
export function meanDistortion(stars: readonly { e1: number; e2: number }[]): { e: number; n: number } | null {
  let s1 = 0;
  let s2 = 0;
  let n = 0;
  for (const s of stars) {
    if (!Number.isFinite(s.e1) || !Number.isFinite(s.e2)) continue;
    s1 += s.e1; s2 += s.e2; n++;
  }
  return n ? { e: Math.hypot(s1, s2) / n, n } : null;
}

/**
 * Shared ellipticity of a set of stars. With `about` (the corners), each quadrant about that
 * point is averaged on its own and the quadrants' values are averaged, weighted by their stars:
 * a pattern pointing at the centre (spacing, astigmatism) is the same in every corner but
 * turns with it, and one average over all four corners would cancel it.
 */
export function sharedEllipticity(stars: readonly { x: number; y: number; e1: number; e2: number }[], about: { x: number; y: number } | null = null): number | null {
  if (!about) {
    const m = meanDistortion(stars);
    return m ? ellipticityFromDistortion(m.e) : null;
  }
  const quads: { x: number; y: number; e1: number; e2: number }[][] = [[], [], [], []];
  for (const s of stars) quads[(s.x >= about.x ? 1 : 0) + (s.y >= about.y ? 2 : 0)].push(s);
  let sum = 0;
  let n = 0;
  for (const q of quads) {
    const m = meanDistortion(q);
    if (!m) continue;
    sum += m.n * ellipticityFromDistortion(m.e);
    n += m.n;
  }
  return n ? sum / n : null;
}
