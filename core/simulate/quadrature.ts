/** Gauss-Legendre quadrature on [-1/2, 1/2] (weights sum to 1). */
/** Nodes and weights by Newton iteration on the Legendre recurrence (as in Numerical Recipes, gauleg). */
function gaussLegendre(n: number): { t: Float64Array; w: Float64Array } {
  const t = new Float64Array(n), w = new Float64Array(n);
  for (let i = 0; i < Math.ceil(n / 2); i++) {
    let z = Math.cos((Math.PI * (i + 0.75)) / (n + 0.5));
    for (let it = 0; it < 100; it++) {
      const L = legendre(n, z);
      const dz = L.p / legendreDerivative(n, z, L);
      z -= dz;
      if (Math.abs(dz) < 1e-15) break;
    }
    // the derivative at the converged root gives the weight
    const dp = legendreDerivative(n, z);
    const wi = 1 / ((1 - z * z) * dp * dp); // = 2/((1-z^2)P'^2) on [-1,1], halved for [-1/2,1/2]
    t[i] = -z / 2; t[n - 1 - i] = z / 2;
    w[i] = wi; w[n - 1 - i] = wi;
  }
  return { t, w };
}

/** P_n(z) and P_(n-1)(z) by the three-term recurrence (k P_k = (2k-1) z P_(k-1) - (k-1) P_(k-2)). */
function legendre(n: number, z: number): { p: number; pPrev: number } {
  let p0 = 1, p1 = 0;
  for (let k = 1; k <= n; k++) {
    const p2 = p1;
    p1 = p0;
    p0 = ((2 * k - 1) * z * p1 - (k - 1) * p2) / k;
  }
  return { p: p0, pPrev: p1 };
}

/** P_n'(z) = n (z P_n - P_(n-1)) / (z^2 - 1). */
function legendreDerivative(n: number, z: number, L = legendre(n, z)): number {
  const { p, pPrev } = L;
  return (n * (z * p - pPrev)) / (z * z - 1);
}

const GL_CACHE = new Map<number, { t: Float64Array; w: Float64Array }>();
export function glNodes(n: number): { t: Float64Array; w: Float64Array } {
  let g = GL_CACHE.get(n);
  if (!g) { g = gaussLegendre(n); GL_CACHE.set(n, g); }
  return g;
}

