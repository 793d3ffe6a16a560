/** Random star fields: power-law fluxes, uniform positions with a minimum separation. */
import { SkyloupeError } from '../errors.ts';
import type { Rng } from './prng.ts';
import type { SceneStarField } from './scene.ts';

/**
 * Inverse CDF of dN/dF ∝ F^-s on [lo, hi]: F = [lo^(1-s) + u (hi^(1-s) - lo^(1-s))]^(1/(1-s)),
 * and lo (hi/lo)^u for s = 1 (direct integration of the density).
 */
export function powerLawFlux(u: number, lo: number, hi: number, s: number): number {
  if (hi <= lo) return lo;
  if (Math.abs(s - 1) < 1e-12) return lo * Math.pow(hi / lo, u);
  const e = 1 - s;
  const a = Math.pow(lo, e), b = Math.pow(hi, e);
  return Math.pow(a + u * (b - a), 1 / e);
}

export interface PlacedStar {
  x: number;
  y: number;
  fluxE: number;
}

/** Places stars by rejection on a cell grid; a scene that cannot be filled is a usage error (never a hang). */
export function generateStars(f: SceneStarField, width: number, height: number, rng: Rng): PlacedStar[] {
  const out: PlacedStar[] = [];
  const n = f.count;
  if (n === 0) return out;
  const x0 = f.marginPx, x1 = width - 1 - f.marginPx;
  const y0 = f.marginPx, y1 = height - 1 - f.marginPx;
  const sep = f.minSeparationPx, sep2 = sep * sep;
  // Cells at least `sep` wide (so a 3x3 block covers every conflict), at most ~4M of them.
  const cell = Math.max(sep, 1, Math.sqrt(((x1 - x0 + 1) * (y1 - y0 + 1)) / 4e6));
  const gw = Math.max(1, Math.ceil((x1 - x0 + 1) / cell)), gh = Math.max(1, Math.ceil((y1 - y0 + 1) / cell));
  const useGrid = sep > 0;
  const head = useGrid ? new Int32Array(gw * gh).fill(-1) : new Int32Array(0);
  const next = useGrid ? new Int32Array(n).fill(-1) : new Int32Array(0);
  const maxAttempts = 30 * n + 1000;
  let attempts = 0;
  while (out.length < n) {
    if (++attempts > maxAttempts) {
      throw new SkyloupeError('usage', `scene: stars.count ${n} cannot be placed ${sep} px apart in a ${width}x${height} frame (placed ${out.length}); lower the count or stars.minSeparationPx`);
    }
    const x = x0 + rng.uniform() * (x1 - x0);
    const y = y0 + rng.uniform() * (y1 - y0);
    if (useGrid) {
      const cx = Math.min(gw - 1, Math.floor((x - x0) / cell)), cy = Math.min(gh - 1, Math.floor((y - y0) / cell));
      let ok = true;
      for (let j = Math.max(0, cy - 1); ok && j <= Math.min(gh - 1, cy + 1); j++) {
        for (let i = Math.max(0, cx - 1); ok && i <= Math.min(gw - 1, cx + 1); i++) {
          for (let k = head[j * gw + i]; k >= 0; k = next[k]) {
            const dx = out[k].x - x, dy = out[k].y - y;
            if (dx * dx + dy * dy < sep2) { ok = false; break; }
          }
        }
      }
      if (!ok) continue;
      const id = out.length;
      next[id] = head[cy * gw + cx];
      head[cy * gw + cx] = id;
    }
    out.push({ x, y, fluxE: powerLawFlux(rng.uniform(), f.fluxMinE, f.fluxMaxE, f.slope) });
  }
  return out;
}
