import type { KernelRunner } from './kernel.ts';

/** [from, to) ranges splitting 0..n into min(parts, n) bands (at least one), in order. */
export function rowBands(n: number, parts: number): [number, number][] {
  const out: [number, number][] = [];
  const k = Math.max(1, Math.min(parts, n));
  for (let i = 0; i < k; i++) out.push([Math.floor((i * n) / k), Math.floor(((i + 1) * n) / k)]);
  return out;
}

/** Number of bands for a pool: a few per worker keeps every core busy to the end; one without workers. */
export function bandCount(pool: KernelRunner): number {
  return Math.max(1, pool.size * 3);
}

/** `band(from, to)` over the pool's bands of 0..n, concurrently; results in band order. */
export function inBands<T>(pool: KernelRunner, n: number, band: (from: number, to: number) => Promise<T>): Promise<T[]> {
  return Promise.all(rowBands(n, bandCount(pool)).map(([from, to]) => band(from, to)));
}

/** A Float32Array on shared memory, so workers read and write it in place. */
export function sharedFloat32(n: number): Float32Array {
  return new Float32Array(new SharedArrayBuffer(n * 4));
}

export function sharedUint8(n: number): Uint8Array {
  return new Uint8Array(new SharedArrayBuffer(n));
}

/** `data` on shared memory when the pool has workers (a copy unless it already is); as it is otherwise. */
export function shareWith(pool: KernelRunner, data: Float32Array): Float32Array {
  if (pool.size === 0 || data.buffer instanceof SharedArrayBuffer) return data;
  const shared = sharedFloat32(data.length);
  shared.set(data);
  return shared;
}
