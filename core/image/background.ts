import { clippedStats, median, type ClippedStats } from './stats.ts';
import { lazyKernel } from '../wasm/instantiate.ts';
import { SKY_STATS_WASM_BASE64 } from './wasm/sky-stats.wasm.ts';
import { defineKernel, type KernelRunner } from '../parallel/kernel.ts';
import { inBands, sharedFloat32, sharedUint8 } from '../parallel/bands.ts';

/**
 * Sky model on a mesh of boxes (Bertin & Arnouts 1996, A&AS 117, 393, section 3.1):
 * sigma-clipped mode per box, a 3x3 median filter over the mesh, then bilinear
 * interpolation between box centres. Follows gradients from light pollution or the Moon
 * on scales larger than the box; gives a per-region noise.
 */
export interface SkyModel {
  readonly width: number;
  readonly height: number;
  readonly box: number;
  readonly meshW: number;
  readonly meshH: number;
  /** Per-box background level and noise sigma (ADU), row-major meshW * meshH. */
  readonly meshLevel: Float32Array;
  readonly meshSigma: Float32Array;
  /** Median of the per-box sigmas. */
  readonly globalSigma: number;
  readonly globalLevel: number;
}

export interface BackgroundOptions {
  /** Box size in pixels; Source Extractor's default BACK_SIZE is 64 (common practice). */
  box?: number;
  /** Median filter size over the mesh (BACK_FILTERSIZE), odd. */
  filter?: number;
}

const QUANTUM_SIGMA = Math.sqrt(1 / 12);

export interface MeshGeometry { box: number; meshW: number; meshH: number }

export function meshGeometry(width: number, height: number, opts: BackgroundOptions = {}): MeshGeometry {
  const box = Math.max(8, Math.min(opts.box ?? 64, Math.max(8, Math.floor(Math.min(width, height) / 2))));
  return { box, meshW: Math.max(1, Math.round(width / box)), meshH: Math.max(1, Math.round(height / box)) };
}

/**
 * Clipped level and sigma of the boxes in mesh rows [my0, my1); NaN where a box is
 * mostly missing. Mesh rows are independent, so worker threads can share the work.
 */
export function meshRowStats(data: Float32Array, width: number, height: number, g: MeshGeometry, my0: number, my1: number): { level: Float32Array; sigma: Float32Array } {
  const { box, meshW, meshH } = g;
  const level = new Float32Array((my1 - my0) * meshW).fill(NaN);
  const sigma = new Float32Array((my1 - my0) * meshW).fill(NaN);
  const k = skyKernel();
  const need = box * box * 4 + 16;
  // the samples go straight into the WebAssembly kernel's buffer when there is one
  const scratch = k && need <= k.samples.length ? k.samples : new Float32Array(need);
  const stats = k && scratch === k.samples ? k.clipped : clippedStats;
  for (let my = my0; my < my1; my++) {
    const y0 = Math.floor((my * height) / meshH);
    const y1 = Math.floor(((my + 1) * height) / meshH);
    for (let mx = 0; mx < meshW; mx++) {
      const x0 = Math.floor((mx * width) / meshW);
      const x1 = Math.floor(((mx + 1) * width) / meshW);
      const area = (x1 - x0) * (y1 - y0);
      // a regular subsample of at least 1000 pixels per box: the clipped mode then carries
      // ~3 % of sigma of sampling error before the mesh filter, and the cost no longer
      // grows with the box area. Whole rows, every step-th one: contiguous reads (a grid of
      // single pixels cost a cache miss every ~4 samples, half the sky step's time on 24 MP).
      const step = Math.max(1, Math.floor(area / 1000));
      // centre the sampled rows in the box, so a gradient does not bias the level
      const sy0 = y0 + (((y1 - y0 - 1) % step) >> 1);
      let n = 0;
      let seen = 0;
      for (let y = sy0; y < y1; y += step) {
        const row = y * width;
        for (let x = x0; x < x1; x++) {
          seen++;
          const v = data[row + x];
          if (v === v) scratch[n++] = v;
        }
      }
      if (n < Math.max(8, seen * 0.3)) continue; // mostly missing: filled from neighbours later
      let integral = true;
      for (let i = 0; i < n && integral; i += 7) integral = scratch[i] === Math.round(scratch[i]);
      const st = stats(scratch, n);
      level[(my - my0) * meshW + mx] = st.level;
      // integer data whose sky sits on one code (an 8-bit frame clipped at black) still has
      // the rounding noise of a unit step, sigma^2 = 1/12 (uniform quantisation, standard result)
      sigma[(my - my0) * meshW + mx] = integral ? Math.max(st.sigma, QUANTUM_SIGMA) : st.sigma;
    }
  }
  return { level, sigma };
}

interface SkyKernel { samples: Float32Array; clipped: (buf: Float32Array, n: number) => ClippedStats }
/**
 * clippedStats compiled to WebAssembly (wasm/sky-stats.as.ts, the same algorithm; stats.ts
 * stays the reference), once per thread; null where WebAssembly is unavailable.
 */
const skyKernel = lazyKernel<SkyKernel>(SKY_STATS_WASM_BASE64, 'sky-stats', (m) => {
  const out = m.f64('outPtr', 5);
  const run = m.fn<(n: number, kappa: number, maxIter: number) => void>('clipped');
  return {
    samples: m.f32('samplesPtr', m.int('capacity')),
    clipped: (_buf, n) => {
      run(n, 3, 6);
      return { level: out[0], sigma: out[1], mean: out[2], median: out[3], count: out[4] };
    },
  };
});

export function estimateSky(data: Float32Array, width: number, height: number, opts: BackgroundOptions = {}): SkyModel {
  const g = meshGeometry(width, height, opts);
  const { level, sigma } = meshRowStats(data, width, height, g, 0, g.meshH);
  return skyFromMesh(width, height, g, level, sigma, opts);
}

/** meshRowStats as a pool kernel: mesh rows [my0, my1). */
export const skyMeshRowsKernel = defineKernel('sky-mesh-rows',
  (a: { data: Float32Array; width: number; height: number; geometry: MeshGeometry; my0: number; my1: number }) =>
    meshRowStats(a.data, a.width, a.height, a.geometry, a.my0, a.my1));

/** estimateSky with the mesh rows in bands over the pool (`data` on shared memory when it has workers). */
export async function estimateSkyInBands(pool: KernelRunner, data: Float32Array, width: number, height: number, opts: BackgroundOptions = {}): Promise<SkyModel> {
  const g = meshGeometry(width, height, opts);
  const level = new Float32Array(g.meshW * g.meshH);
  const sigma = new Float32Array(g.meshW * g.meshH);
  await inBands(pool, g.meshH, async (my0, my1) => {
    const r = await pool.run(skyMeshRowsKernel, { data, width, height, geometry: g, my0, my1 });
    level.set(r.level, my0 * g.meshW);
    sigma.set(r.sigma, my0 * g.meshW);
  });
  return skyFromMesh(width, height, g, level, sigma, opts);
}

/** Fill holes, median-filter the mesh, and summarise: the cheap, serial end of the sky model. */
export function skyFromMesh(width: number, height: number, g: MeshGeometry, meshLevel: Float32Array, meshSigma: Float32Array, opts: BackgroundOptions = {}): SkyModel {
  const { box, meshW, meshH } = g;
  fillMissing(meshLevel, meshW, meshH);
  fillMissing(meshSigma, meshW, meshH);
  const f = opts.filter ?? 3;
  const level = f > 1 ? medianFilterMesh(meshLevel, meshW, meshH, f) : meshLevel;
  const sigma = f > 1 ? medianFilterMesh(meshSigma, meshW, meshH, f) : meshSigma;
  const tmp = Float32Array.from(sigma);
  const globalSigma = median(tmp, tmp.length);
  const tmp2 = Float32Array.from(level);
  const globalLevel = median(tmp2, tmp2.length);
  return { width, height, box, meshW, meshH, meshLevel: level, meshSigma: sigma, globalSigma, globalLevel };
}

/** Replace NaN mesh cells by the mean of valid neighbours, growing outward. */
function fillMissing(mesh: Float32Array, w: number, h: number): void {
  let missing = 0;
  for (let i = 0; i < mesh.length; i++) if (!(mesh[i] === mesh[i])) missing++;
  if (missing === mesh.length) { mesh.fill(NaN); return; }
  while (missing > 0) {
    const next = Float32Array.from(mesh);
    for (let y = 0; y < h; y++) {
      for (let x = 0; x < w; x++) {
        const i = y * w + x;
        if (mesh[i] === mesh[i]) continue;
        let s = 0;
        let c = 0;
        for (let dy = -1; dy <= 1; dy++) {
          for (let dx = -1; dx <= 1; dx++) {
            const xx = x + dx;
            const yy = y + dy;
            if (xx < 0 || yy < 0 || xx >= w || yy >= h) continue;
            const v = mesh[yy * w + xx];
            if (v === v) { s += v; c++; }
          }
        }
        if (c > 0) { next[i] = s / c; missing--; }
      }
    }
    mesh.set(next);
  }
}

function medianFilterMesh(mesh: Float32Array, w: number, h: number, size: number): Float32Array {
  const r = size >> 1;
  const out = new Float32Array(mesh.length);
  const buf = new Float32Array(size * size);
  // beyond the mesh, values are point-reflected (2 v[edge] - v[mirror]): a linear
  // gradient then passes the filter unchanged, where truncating the window at a
  // corner would pull the corner level toward the interior
  const at = (x: number, y: number): number => {
    let sx = 0;
    let sy = 0;
    let xx = x;
    let yy = y;
    if (x < 0) { xx = Math.min(w - 1, -x); sx = -1; } else if (x >= w) { xx = Math.max(0, 2 * (w - 1) - x); sx = 1; }
    if (y < 0) { yy = Math.min(h - 1, -y); sy = -1; } else if (y >= h) { yy = Math.max(0, 2 * (h - 1) - y); sy = 1; }
    let v = mesh[yy * w + xx];
    if (sx !== 0) v = 2 * mesh[yy * w + (sx < 0 ? 0 : w - 1)] - v;
    if (sy !== 0) {
      const ex = sx !== 0 ? (sx < 0 ? 0 : w - 1) : xx;
      const edge = sx !== 0 ? 2 * mesh[(sy < 0 ? 0 : h - 1) * w + ex] - mesh[(sy < 0 ? 0 : h - 1) * w + xx] : mesh[(sy < 0 ? 0 : h - 1) * w + xx];
      v = 2 * edge - v;
    }
    return v;
  };
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      let n = 0;
      for (let dy = -r; dy <= r; dy++) for (let dx = -r; dx <= r; dx++) buf[n++] = at(x + dx, y + dy);
      out[y * w + x] = median(buf, n);
    }
  }
  return out;
}

/** Bilinear interpolation of a mesh quantity at pixel (x, y); box centres at ((i + 0.5) * W/meshW - 0.5). */
function meshAt(model: SkyModel, mesh: Float32Array, x: number, y: number): number {
  const { meshW, meshH, width, height } = model;
  let fx = ((x + 0.5) * meshW) / width - 0.5;
  let fy = ((y + 0.5) * meshH) / height - 0.5;
  // beyond the outer box centres the edge segment is extrapolated linearly, so a
  // gradient keeps rising to the frame border instead of levelling off
  const ix = Math.max(0, Math.min(Math.floor(fx), meshW - 2));
  const iy = Math.max(0, Math.min(Math.floor(fy), meshH - 2));
  const tx = meshW > 1 ? fx - ix : 0;
  const ty = meshH > 1 ? fy - iy : 0;
  const ix1 = meshW > 1 ? ix + 1 : ix;
  const iy1 = meshH > 1 ? iy + 1 : iy;
  const a = mesh[iy * meshW + ix];
  const b = mesh[iy * meshW + ix1];
  const c = mesh[iy1 * meshW + ix];
  const d = mesh[iy1 * meshW + ix1];
  return (a * (1 - tx) + b * tx) * (1 - ty) + (c * (1 - tx) + d * tx) * ty;
}

export function skyLevelAt(model: SkyModel, x: number, y: number): number {
  return meshAt(model, model.meshLevel, x, y);
}

export function skyNoiseAt(model: SkyModel, x: number, y: number): number {
  return meshAt(model, model.meshSigma, x, y);
}

/**
 * data - sky, as a new array (the input is never changed). Missing pixels (NaN) become 0
 * here, so filters see no hole; `missing` marks them for the edge test.
 */
export function subtractSky(data: Float32Array, model: SkyModel): { residual: Float32Array; missing: Uint8Array | null } {
  const out = new Float32Array(model.width * model.height);
  const missing = subtractSkyRows(data, model, 0, model.height, out);
  return { residual: out, missing };
}

/**
 * Rows [y0, y1) of data - sky into `out` (the input is never changed). Missing pixels
 * (NaN) become 0 there, so filters see no hole; the returned mask (full-frame layout,
 * or null when none) marks them for the edge test.
 */
export function subtractSkyRows(data: Float32Array, model: SkyModel, y0: number, y1: number, out: Float32Array, missingOut?: Uint8Array): Uint8Array | null {
  const { width, height, meshW, meshH, meshLevel } = model;
  let missing: Uint8Array | null = null;
  const rowLevel = new Float64Array(meshW);
  // the x interpolation is the same on every row: cell index and weight per column, once
  const sx = meshW / width;
  const ixOf = new Int32Array(width);
  const txOf = new Float64Array(width);
  for (let x = 0; x < width; x++) {
    const fx = (x + 0.5) * sx - 0.5;
    const ix = meshW > 1 ? Math.max(0, Math.min(Math.floor(fx), meshW - 2)) : 0;
    ixOf[x] = ix;
    txOf[x] = meshW > 1 ? fx - ix : 0;
  }
  for (let y = y0; y < y1; y++) {
    // interpolate the mesh to this row once, then along x
    const fy = ((y + 0.5) * meshH) / height - 0.5;
    const iy = Math.max(0, Math.min(Math.floor(fy), meshH - 2));
    const iy1 = meshH > 1 ? iy + 1 : iy;
    const ty = meshH > 1 ? fy - iy : 0;
    for (let i = 0; i < meshW; i++) rowLevel[i] = meshLevel[iy * meshW + i] * (1 - ty) + meshLevel[iy1 * meshW + i] * ty;
    const row = y * width;
    const flat = meshW > 1 ? 0 : rowLevel[0];
    for (let x = 0; x < width; x++) {
      let lvl = flat;
      if (meshW > 1) {
        const ix = ixOf[x];
        lvl = rowLevel[ix] + (rowLevel[ix + 1] - rowLevel[ix]) * txOf[x];
      }
      const v = data[row + x];
      if (v === v) out[row + x] = v - lvl;
      else {
        out[row + x] = 0;
        if (!missing) missing = missingOut ?? new Uint8Array(width * height);
        missing[row + x] = 1;
      }
    }
  }
  return missing;
}

/** subtractSkyRows as a pool kernel: rows [y0, y1) into the shared `out` and `missing`; true if any pixel is missing. */
export const subtractSkyRowsKernel = defineKernel('subtract-sky-rows',
  (a: { data: Float32Array; sky: SkyModel; y0: number; y1: number; out: Float32Array; missing: Uint8Array }) =>
    subtractSkyRows(a.data, a.sky, a.y0, a.y1, a.out, a.missing) !== null);

/** subtractSky in bands of rows over the pool, into shared memory. */
export async function subtractSkyInBands(pool: KernelRunner, data: Float32Array, sky: SkyModel): Promise<{ residual: Float32Array; missing: Uint8Array | null }> {
  const residual = sharedFloat32(sky.width * sky.height);
  const missing = sharedUint8(sky.width * sky.height);
  const any = await inBands(pool, sky.height, (y0, y1) => pool.run(subtractSkyRowsKernel, { data, sky, y0, y1, out: residual, missing }));
  return { residual, missing: any.some(Boolean) ? missing : null };
}
