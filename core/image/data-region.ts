/**
 * Where the frame holds sky (issue 13): the whole frame, the image disc of a circular fisheye, or
 * a mask of cells. Outside it there is no sky to measure: a fisheye's black corners hold no stars,
 * and blur or shape "measured" there is noise.
 *
 * Method: robust statistics (median, MAD) on small cells. No-data cells sit at one black level
 * with the noise of the black level, and meet the sky in a sharp step (the edge of the image
 * circle, a mask, missing pixels), where vignetting falls off smoothly: a cell counts as black
 * when its level is within a few black-level noise sigmas of the darkest cells, and a black region
 * exists only when its border steps up by far more than that (the image-circle edge). A circle is
 * fitted to the border points by algebraic least squares (Kasa 1976, IEEE Trans. Instrum. Meas.
 * 25, 8; from memory) and kept when it classifies the cells as the data do; otherwise the cells
 * themselves are the mask. Vignetting: the sky level above the black level against the squared
 * distance from the centre, the relative illumination at the disc edge (or frame corner).
 * Coordinates are those of the plane given (pixel centres at integers).
 */
import { median } from './stats.ts';

export interface DataRegion {
  kind: 'full' | 'circle' | 'mask';
  /** The image disc (kind 'circle'), px. */
  circle: { xPx: number; yPx: number; radiusPx: number } | null;
  /** Cells without sky (kind 'mask'): row-major '0' = no sky, '1' = sky, cellPx square cells from (0, 0). */
  mask: { cellPx: number; cols: number; rows: number; cells: string } | null;
  /** Fraction of the frame's area that holds sky. */
  skyFraction: number;
  /** The black level outside the sky (ADU) when there is a region without sky. */
  blackLevel: number | null;
  /**
   * Sky brightness falloff: the relative illumination at `radiusPx` from `centrePx` (1 = none),
   * from the sky level above the black level (or above 0 ADU when no black region shows it).
   */
  vignetting: {
    centrePx: { x: number; y: number };
    radiusPx: number;
    edgeIllumination: number;
    blackLevelFrom: 'black region' | 'zero';
  } | null;
  note: string;
}

interface Cells {
  size: number;
  cols: number;
  rows: number;
  level: Float64Array;
  sigma: Float64Array;
  /** Fraction of finite pixels. */
  finite: Float64Array;
}

function cellStats(data: Float32Array, width: number, height: number, size: number): Cells {
  const cols = Math.ceil(width / size);
  const rows = Math.ceil(height / size);
  const level = new Float64Array(cols * rows);
  const sigma = new Float64Array(cols * rows);
  const finite = new Float64Array(cols * rows);
  const buf = new Float64Array(size * size);
  // about 100 pixels per cell: a regular subsample
  const step = Math.max(1, Math.round(size / 10));
  for (let r = 0; r < rows; r++) {
    for (let q = 0; q < cols; q++) {
      let n = 0;
      let total = 0;
      const y1 = Math.min(height, (r + 1) * size);
      const x1 = Math.min(width, (q + 1) * size);
      for (let y = r * size; y < y1; y += step) {
        for (let x = q * size; x < x1; x += step) {
          total++;
          const v = data[y * width + x];
          if (v === v && Number.isFinite(v)) buf[n++] = v;
        }
      }
      const k = r * cols + q;
      finite[k] = total ? n / total : 0;
      if (n < 4) { level[k] = NaN; sigma[k] = NaN; continue; }
      const m = median(buf, n);
      for (let i = 0; i < n; i++) buf[i] = Math.abs(buf[i] - m);
      level[k] = m;
      sigma[k] = 1.4826 * median(buf, n);
    }
  }
  return { size, cols, rows, level, sigma, finite };
}

function quantile(a: Float64Array, f: number): number {
  const s = Float64Array.from(a).filter(Number.isFinite).sort();
  if (s.length === 0) return NaN;
  return s[Math.min(s.length - 1, Math.max(0, Math.round(f * (s.length - 1))))];
}

/** Algebraic circle fit x^2 + y^2 + D x + E y + F = 0 (Kasa 1976). */
export function fitCircle(xs: ArrayLike<number>, ys: ArrayLike<number>): { x: number; y: number; r: number } | null {
  const n = xs.length;
  if (n < 3) return null;
  // normal equations of [x y 1] [D E F]^T = -(x^2 + y^2), centred for conditioning
  let mx = 0, my = 0;
  for (let i = 0; i < n; i++) { mx += xs[i]; my += ys[i]; }
  mx /= n; my /= n;
  let sxx = 0, sxy = 0, syy = 0, sxz = 0, syz = 0, sz = 0;
  for (let i = 0; i < n; i++) {
    const x = xs[i] - mx;
    const y = ys[i] - my;
    const z = x * x + y * y;
    sxx += x * x; sxy += x * y; syy += y * y; sxz += x * z; syz += y * z; sz += z;
  }
  // with centred x, y: sum x = sum y = 0, so F decouples: F = -sz / n
  const det = sxx * syy - sxy * sxy;
  if (!(Math.abs(det) > 1e-12)) return null;
  const D = (-sxz * syy + syz * sxy) / det;
  const E = (-syz * sxx + sxz * sxy) / det;
  const F = -sz / n;
  const cx = -D / 2;
  const cy = -E / 2;
  const r2 = cx * cx + cy * cy - F;
  if (!(r2 > 0)) return null;
  return { x: cx + mx, y: cy + my, r: Math.sqrt(r2) };
}

/** Fraction of the width x height frame inside the circle (sampled on a 256 x 256 grid). */
export function circleFraction(width: number, height: number, c: { x: number; y: number; r: number }): number {
  let inside = 0;
  const n = 256;
  for (let j = 0; j < n; j++) {
    const y = -0.5 + ((j + 0.5) * height) / n;
    for (let i = 0; i < n; i++) {
      const x = -0.5 + ((i + 0.5) * width) / n;
      if ((x - c.x) ** 2 + (y - c.y) ** 2 <= c.r * c.r) inside++;
    }
  }
  return inside / (n * n);
}

/** Whether a point (plane px) lies in the data region, at least `marginPx` inside its edge. */
export function inDataRegion(region: DataRegion, x: number, y: number, marginPx = 0): boolean {
  if (region.kind === 'circle' && region.circle) {
    const c = region.circle;
    return Math.hypot(x - c.xPx, y - c.yPx) <= c.radiusPx - marginPx;
  }
  if (region.kind === 'mask' && region.mask) {
    const m = region.mask;
    const span = Math.max(0, Math.ceil(marginPx / m.cellPx));
    const q0 = Math.floor((x + 0.5) / m.cellPx);
    const r0 = Math.floor((y + 0.5) / m.cellPx);
    for (let r = r0 - span; r <= r0 + span; r++) {
      for (let q = q0 - span; q <= q0 + span; q++) {
        if (q < 0 || r < 0 || q >= m.cols || r >= m.rows) continue;
        if (m.cells[r * m.cols + q] !== '1') return false;
      }
    }
    return true;
  }
  return true;
}

/**
 * A check with the detections: a black region holds no stars. When the part found without sky
 * holds detections well beyond its edge at a quarter or more of the density of the sky part
 * (10 or more), it is dark sky after all (a dark nebula, a flat faint half of the frame), and
 * the whole frame counts as sky.
 */
export function confirmRegion(region: DataRegion, points: readonly { x: number; y: number }[], width: number, height: number, marginPx: number): DataRegion {
  if (region.kind === 'full' || region.skyFraction >= 1 || points.length === 0) return region;
  let out = 0;
  for (const p of points) if (!inDataRegion(region, p.x, p.y, -marginPx)) out++;
  const inside = points.length - out;
  const dOut = out / Math.max(1e-9, (1 - region.skyFraction) * width * height);
  const dIn = inside / Math.max(1e-9, region.skyFraction * width * height);
  if (out < 10 || dOut < 0.25 * dIn) return region;
  return {
    ...region, kind: 'full', circle: null, mask: null, skyFraction: 1, blackLevel: null,
    note: `sky across the whole frame (a darker part holds ${out} detections: sky, not black)`,
  };
}

/** Fraction of a rectangle (px bounds) that lies in the data region (sampled 16 x 16). */
export function regionFractionOf(region: DataRegion, x0: number, y0: number, x1: number, y1: number): number {
  if (region.kind === 'full') return 1;
  let inside = 0;
  for (let j = 0; j < 16; j++) {
    for (let i = 0; i < 16; i++) {
      if (inDataRegion(region, x0 + ((i + 0.5) * (x1 - x0)) / 16, y0 + ((j + 0.5) * (y1 - y0)) / 16)) inside++;
    }
  }
  return inside / 256;
}

/** The same region in another pixel scale: x' = scale x + offset (plane to full-resolution frame). */
export function scaleRegion(region: DataRegion, scale: number, offset: number): DataRegion {
  if (scale === 1 && offset === 0) return region;
  return {
    ...region,
    circle: region.circle ? { xPx: scale * region.circle.xPx + offset, yPx: scale * region.circle.yPx + offset, radiusPx: scale * region.circle.radiusPx } : null,
    mask: region.mask ? { ...region.mask, cellPx: region.mask.cellPx * scale } : null,
    vignetting: region.vignetting ? {
      ...region.vignetting,
      centrePx: { x: scale * region.vignetting.centrePx.x + offset, y: scale * region.vignetting.centrePx.y + offset },
      radiusPx: scale * region.vignetting.radiusPx,
    } : null,
  };
}

export function findDataRegion(data: Float32Array, width: number, height: number): DataRegion {
  const size = Math.max(4, Math.round(Math.min(width, height) / 80));
  const c = cellStats(data, width, height, size);
  const n = c.cols * c.rows;
  const missing = new Uint8Array(n);
  for (let k = 0; k < n; k++) if (c.finite[k] < 0.5 || !Number.isFinite(c.level[k])) missing[k] = 1;
  // The black level: the darkest cells' level and noise.
  const levels = Float64Array.from(c.level).filter(Number.isFinite);
  const B = quantile(levels, 0.005);
  const q01 = quantile(levels, 0.01);
  const lowest = [];
  for (let k = 0; k < n; k++) if (!missing[k] && c.level[k] <= q01) lowest.push(c.sigma[k]);
  const sigB = lowest.length ? median(Float64Array.from(lowest), lowest.length) : 0;
  const skyLevel = quantile(levels, 0.5);
  const range = skyLevel - B;
  const tol = Math.max(4 * sigB, 0.02 * Math.max(range, 0), 1e-6);
  const black = new Uint8Array(n);
  let nBlack = 0;
  for (let k = 0; k < n; k++) {
    if (missing[k]) continue;
    if (c.level[k] - B <= tol && c.sigma[k] <= 2 * sigB + 0.25 * tol) { black[k] = 1; nBlack++; }
  }
  // A black region steps up sharply at its border: the brightest cell within two cells of each
  // border cell stands far above the black level (a smooth vignetting gradient does not).
  const jumps: number[] = [];
  const border: [number, number][] = [];
  for (let r = 0; r < c.rows; r++) {
    for (let q = 0; q < c.cols; q++) {
      const k = r * c.cols + q;
      if (!black[k]) continue;
      let hi = -Infinity;
      let touches = false;
      for (let dr = -2; dr <= 2; dr++) for (let dq = -2; dq <= 2; dq++) {
        const rr = r + dr, qq = q + dq;
        if (rr < 0 || qq < 0 || rr >= c.rows || qq >= c.cols) continue;
        const kk = rr * c.cols + qq;
        if (black[kk] || missing[kk]) continue;
        if (Math.abs(dr) <= 1 && Math.abs(dq) <= 1) touches = true;
        hi = Math.max(hi, c.level[kk]);
      }
      if (touches) { jumps.push(hi - B); border.push([q, r]); }
    }
  }
  const stepUp = jumps.length ? median(Float64Array.from(jumps), jumps.length) : 0;
  const nMissing = missing.reduce((s, v) => s + v, 0);
  const hasBlack = nBlack >= 0.02 * n && range > 20 * Math.max(sigB, 1e-6) && stepUp > 8 * tol;
  const frameCentre = { x: (width - 1) / 2, y: (height - 1) / 2 };
  if (!hasBlack && nMissing < 0.02 * n) {
    return {
      kind: 'full', circle: null, mask: null, skyFraction: 1 - nMissing / n, blackLevel: null,
      vignetting: vignettingOf(c, missing, black, frameCentre, Math.hypot(width, height) / 2, 0, 'zero'),
      note: 'sky across the whole frame',
    };
  }
  const noSky = new Uint8Array(n);
  for (let k = 0; k < n; k++) noSky[k] = hasBlack && black[k] ? 1 : missing[k];
  // Border points between sky and no-sky cells, off the frame's own edge: fit a circle.
  const bx: number[] = [];
  const by: number[] = [];
  for (let r = 0; r < c.rows; r++) {
    for (let q = 0; q < c.cols; q++) {
      const k = r * c.cols + q;
      if (noSky[k]) continue;
      for (const [dq, dr] of [[1, 0], [-1, 0], [0, 1], [0, -1]]) {
        const qq = q + dq, rr = r + dr;
        if (qq < 0 || rr < 0 || qq >= c.cols || rr >= c.rows) continue;
        if (!noSky[rr * c.cols + qq]) continue;
        bx.push((q + 0.5 + dq / 2) * size - 0.5);
        by.push((r + 0.5 + dr / 2) * size - 0.5);
      }
    }
  }
  const circle = fitCircle(bx, by);
  let agree = 0;
  let total = 0;
  if (circle) {
    for (let r = 0; r < c.rows; r++) {
      for (let q = 0; q < c.cols; q++) {
        const k = r * c.cols + q;
        const x = (q + 0.5) * size - 0.5;
        const y = (r + 0.5) * size - 0.5;
        const d = Math.hypot(x - circle.x, y - circle.y) - circle.r;
        if (Math.abs(d) < size) continue; // cells the edge passes through
        total++;
        if ((d < 0) === !noSky[k]) agree++;
      }
    }
  }
  const blackLevel = hasBlack ? B : null;
  if (circle && total > 0 && agree / total >= 0.97 && circle.r > 0.1 * Math.min(width, height)) {
    const frac = circleFraction(width, height, circle);
    return {
      kind: 'circle', circle: { xPx: circle.x, yPx: circle.y, radiusPx: circle.r }, mask: null, skyFraction: frac, blackLevel,
      vignetting: vignettingOf(c, noSky, noSky, { x: circle.x, y: circle.y }, circle.r, hasBlack ? B : 0, hasBlack ? 'black region' : 'zero'),
      note: `an image circle of radius ${circle.r.toFixed(0)} px centred at x ${circle.x.toFixed(0)}, y ${circle.y.toFixed(0)} px holds the sky (${(100 * frac).toFixed(0)} % of the frame); outside it the frame is black`,
    };
  }
  let sky = 0;
  let cells = '';
  for (let k = 0; k < n; k++) { cells += noSky[k] ? '0' : '1'; if (!noSky[k]) sky++; }
  return {
    kind: 'mask', circle: null, mask: { cellPx: size, cols: c.cols, rows: c.rows, cells }, skyFraction: sky / n, blackLevel,
    vignetting: vignettingOf(c, noSky, noSky, frameCentre, Math.hypot(width, height) / 2, hasBlack ? B : 0, hasBlack ? 'black region' : 'zero'),
    note: `${(100 * (1 - sky / n)).toFixed(0)} % of the frame holds no sky (${hasBlack ? 'black' : 'missing'} pixels)`,
  };
}

/** Relative illumination at radius R: a robust fit of (level - black) = a + b (r / R)^2 over the sky cells. */
function vignettingOf(c: Cells, missing: Uint8Array, black: Uint8Array, centre: { x: number; y: number }, R: number, blackLevel: number, from: 'black region' | 'zero'): DataRegion['vignetting'] {
  const rho2: number[] = [];
  const lv: number[] = [];
  for (let r = 0; r < c.rows; r++) {
    for (let q = 0; q < c.cols; q++) {
      const k = r * c.cols + q;
      if (missing[k] || black[k] || !Number.isFinite(c.level[k])) continue;
      const x = (q + 0.5) * c.size - 0.5;
      const y = (r + 0.5) * c.size - 0.5;
      rho2.push(((x - centre.x) ** 2 + (y - centre.y) ** 2) / (R * R));
      lv.push(c.level[k] - blackLevel);
    }
  }
  if (lv.length < 10) return null;
  // least squares with 3-sigma clipping (stars, gradients) twice
  let keep = lv.map(() => true);
  let a = 0;
  let b = 0;
  for (let it = 0; it < 3; it++) {
    let n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
    for (let i = 0; i < lv.length; i++) {
      if (!keep[i]) continue;
      n++; sx += rho2[i]; sy += lv[i]; sxx += rho2[i] * rho2[i]; sxy += rho2[i] * lv[i];
    }
    const det = n * sxx - sx * sx;
    if (!(det > 0)) return null;
    b = (n * sxy - sx * sy) / det;
    a = (sy - b * sx) / n;
    const res = lv.map((v, i) => v - a - b * rho2[i]);
    const s = 1.4826 * median(Float64Array.from(res.filter((_, i) => keep[i]).map(Math.abs)), keep.filter(Boolean).length);
    keep = res.map((v) => Math.abs(v) <= 3 * s + 1e-9);
  }
  if (!(a > 0)) return null;
  return { centrePx: centre, radiusPx: R, edgeIllumination: Math.max(0, (a + b) / a), blackLevelFrom: from };
}
