/** Smooth weighted least-squares polynomial surfaces over the frame, sampled on a grid for drawing. */
import type { Geometry } from './geometry.ts';
import { robustLinearFit } from './lsq.ts';
import type { Surface } from './types.ts';

export function polyTerms(degree: number): [number, number][] {
  const t: [number, number][] = [];
  for (let d = 0; d <= degree; d++) for (let j = 0; j <= d; j++) t.push([d - j, j]);
  return t;
}

/** Largest degree (<= maxDegree) with at least 10 stars per coefficient. */
export function degreeFor(n: number, maxDegree: number): number {
  let d = maxDegree;
  while (d > 0 && polyTerms(d).length * 10 > n) d--;
  return d;
}

export function evalSurface(s: Pick<Surface, 'origin' | 'scalePx' | 'terms' | 'coef'>, x: number, y: number): number {
  const u = (x - s.origin.x) / s.scalePx;
  const v = (y - s.origin.y) / s.scalePx;
  let f = 0;
  for (let k = 0; k < s.terms.length; k++) f += s.coef[k] * u ** s.terms[k][0] * v ** s.terms[k][1];
  return f;
}

export function sampleGrid(g: Geometry, cols = 24): { cols: number; rows: number; x: number[]; y: number[] } {
  const rows = Math.max(2, Math.round((cols * g.height) / g.width));
  const x: number[] = [];
  const y: number[] = [];
  for (let r = 0; r < rows; r++) {
    for (let q = 0; q < cols; q++) {
      x.push(-0.5 + ((q + 0.5) * g.width) / cols);
      y.push(-0.5 + ((r + 0.5) * g.height) / rows);
    }
  }
  return { cols, rows, x, y };
}

export function fitSurface(
  g: Geometry, xs: Float64Array, ys: Float64Array, values: Float64Array, sigma: Float64Array,
  quantity: string, unit: string, maxDegree: number, mode: 'floor' | 'scale' = 'floor',
): Surface | null {
  const n = values.length;
  const degree = degreeFor(n, maxDegree);
  const terms = polyTerms(degree);
  const p = terms.length;
  if (n < p + 2) return null;
  const A = new Float64Array(n * p);
  for (let i = 0; i < n; i++) {
    const u = (xs[i] - g.cx) / g.scale;
    const v = (ys[i] - g.cy) / g.scale;
    for (let k = 0; k < p; k++) A[i * p + k] = u ** terms[k][0] * v ** terms[k][1];
  }
  const fit = robustLinearFit(A, values, sigma, p, { mode });
  if (!fit) return null;
  let ss = 0;
  let m = 0;
  for (let i = 0; i < n; i++) {
    if (fit.robust[i] === 0) continue;
    let f = 0;
    for (let k = 0; k < p; k++) f += A[i * p + k] * fit.coef[k];
    ss += (values[i] - f) ** 2;
    m++;
  }
  const grid = sampleGrid(g);
  const surf: Surface = {
    quantity, unit, degree,
    origin: { x: g.cx, y: g.cy }, scalePx: g.scale,
    terms, coef: Array.from(fit.coef), coefErr: Array.from({ length: p }, (_, k) => Math.sqrt(Math.max(0, fit.cov[k * p + k]))),
    residualRms: m ? Math.sqrt(ss / m) : NaN, scatter: fit.scatter, nStars: n,
    samples: { ...grid, values: [] },
  };
  surf.samples.values = grid.x.map((x, k) => evalSurface(surf, x, grid.y[k]));
  return surf;
}
