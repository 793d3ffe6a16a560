/**
 * Checks for every argument that crosses the bridge (IPC from the page, or HTTP in browser
 * mode). Anything unexpected is refused with a one-line usage error; nothing is coerced silently.
 */
import { usage } from '../../core/errors.ts';
import type { ExportKind, OpticsInput } from '../preload/bridge.ts';

/** Largest frame upload accepted: a 100-megapixel 32-bit frame plus headers. */
export const MAX_UPLOAD_BYTES = 512 * 1024 * 1024;
export const MAX_PNG_BYTES = 64 * 1024 * 1024;

/** Plausible ranges: a phone lens to a large observatory, sub-micron to very large pixels. */
const OPTICS_RANGES: Record<keyof OpticsInput, [number, number, string]> = {
  focalLengthMm: [1, 100_000, 'focal length (mm)'],
  pixelSizeUm: [0.2, 100, 'pixel size (µm)'],
  fNumber: [0.5, 200, 'f-number'],
};

export function fileName(v: unknown): string {
  if (typeof v !== 'string' || v.length === 0 || v.length > 255) throw usage('file name must be a string of 1 to 255 characters');
  // a name, never a path: keep only the last component
  const base = v.split(/[\\/]/).pop() ?? '';
  if (!base || base === '.' || base === '..' || /[\u0000-\u001f\u007f]/.test(base)) throw usage('file name is not usable');
  return base;
}

export function frameBytes(v: unknown): Uint8Array {
  let bytes: Uint8Array;
  if (v instanceof Uint8Array) bytes = v;
  else if (v instanceof ArrayBuffer) bytes = new Uint8Array(v);
  else throw usage('frame bytes must be an ArrayBuffer');
  if (bytes.length === 0) throw usage('the file is empty');
  if (bytes.length > MAX_UPLOAD_BYTES) throw usage(`the file is too large (${bytes.length} bytes, limit ${MAX_UPLOAD_BYTES})`);
  return bytes;
}

export function optics(v: unknown): OpticsInput | undefined {
  if (v === undefined || v === null) return undefined;
  if (typeof v !== 'object' || Array.isArray(v)) throw usage('optics must be an object');
  const out: OpticsInput = {};
  for (const [k, raw] of Object.entries(v as Record<string, unknown>)) {
    if (!(k in OPTICS_RANGES)) throw usage(`unknown optics field "${k}"`);
    if (raw === undefined || raw === null) continue;
    const [lo, hi, label] = OPTICS_RANGES[k as keyof OpticsInput];
    if (typeof raw !== 'number' || !Number.isFinite(raw) || raw < lo || raw > hi) throw usage(`${label} must be a number from ${lo} to ${hi}`);
    out[k as keyof OpticsInput] = raw;
  }
  return Object.keys(out).length ? out : undefined;
}

export function analysisId(v: unknown): string {
  if (typeof v !== 'string' || !/^[a-z0-9]{1,32}$/.test(v)) throw usage('analysis id is not valid');
  return v;
}

export function starIndex(v: unknown): number {
  if (typeof v !== 'number' || !Number.isInteger(v) || v < 0 || v > 10_000_000) throw usage('star index must be a non-negative integer');
  return v;
}

export function exportKind(v: unknown): ExportKind {
  if (v !== 'json' && v !== 'csv' && v !== 'html') throw usage('export kind must be json, csv or html');
  return v;
}

export function sweepPoints(v: unknown): { id: string; spacingMm: number }[] {
  if (!Array.isArray(v) || v.length < 2 || v.length > 24) throw usage('a spacer sweep needs 2 to 24 frames');
  return v.map((p, i) => {
    if (typeof p !== 'object' || p === null) throw usage(`sweep point ${i + 1} must be an object`);
    const { id, spacingMm } = p as Record<string, unknown>;
    if (typeof spacingMm !== 'number' || !Number.isFinite(spacingMm) || Math.abs(spacingMm) > 1000) {
      throw usage(`sweep point ${i + 1}: spacer distance must be a number of millimetres`);
    }
    return { id: analysisId(id), spacingMm };
  });
}

/** A camera key as the engine makes it (pipeline.ts cameraKey): 1 to 120 printable characters. */
export function cameraKey(v: unknown): string {
  if (typeof v !== 'string' || v.length === 0 || v.length > 120 || /[\u0000-\u001f\u007f]/.test(v)) throw usage('camera name must be 1 to 120 printable characters');
  return v;
}

/** The focus step of a focus pair: micrometres at the sensor, non-zero, at most 10 mm. */
export function focusStepUm(v: unknown): number {
  if (typeof v !== 'number' || !Number.isFinite(v) || v === 0 || Math.abs(v) > 10_000) throw usage('the focus step must be a non-zero number of micrometres (at most 10000)');
  return v;
}

/** PNG signature (RFC 2083 section 12.11), so the save path only ever writes a PNG. */
export function pngBytes(v: unknown): Uint8Array {
  const b = v instanceof Uint8Array ? v : v instanceof ArrayBuffer ? new Uint8Array(v) : null;
  if (!b || b.length < 8 || b.length > MAX_PNG_BYTES) throw usage('PNG data must be 8 bytes to 64 MiB');
  const sig = [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a];
  if (!sig.every((x, i) => b[i] === x)) throw usage('data is not a PNG image');
  return b;
}

export function pngName(v: unknown): string {
  const name = fileName(v);
  return name.toLowerCase().endsWith('.png') ? name : `${name}.png`;
}
