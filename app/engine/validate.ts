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

/** A focus series as the host runs it (validate.focusSeries): bytes as views, everything checked. */
export interface FocusSeriesJob {
  frames: { name: string; bytes: Uint8Array; position: number | null }[];
  stepUnitUm: number | null;
  optics?: OpticsInput;
  wavelengthNm?: number;
}

/** Most frames in one focus series, and the most bytes all of them may hold together. */
export const MAX_SERIES_FRAMES = 24;
export const MAX_SERIES_BYTES = 1024 * 1024 * 1024;

export function focusSeries(v: unknown): FocusSeriesJob {
  if (typeof v !== 'object' || v === null || Array.isArray(v)) throw usage('a focus series must be an object');
  const { frames, stepUnitUm, optics: o, wavelengthNm } = v as Record<string, unknown>;
  if (!Array.isArray(frames)) throw usage('a focus series needs a list of frames');
  if (frames.length === 2) throw usage('two frames cannot show a focus curve: for two frames a known step apart use the focus pair, or add a third frame (five or more across focus are better)');
  if (frames.length < 3) throw usage('a focus series needs three or more frames at different focuser positions (five or more across focus are better)');
  if (frames.length > MAX_SERIES_FRAMES) throw usage(`a focus series takes at most ${MAX_SERIES_FRAMES} frames`);
  let total = 0;
  const out = frames.map((f, i) => {
    if (typeof f !== 'object' || f === null) throw usage(`series frame ${i + 1} must be an object`);
    const { name, bytes, position } = f as Record<string, unknown>;
    const n = fileName(name);
    const b = frameBytes(bytes);
    total += b.length;
    if (position !== null && position !== undefined && (typeof position !== 'number' || !Number.isFinite(position) || Math.abs(position) > 1e7)) {
      throw usage(`${n}: the focuser position must be a number (or left empty to read it from the header)`);
    }
    return { name: n, bytes: b, position: typeof position === 'number' ? position : null };
  });
  if (total > MAX_SERIES_BYTES) throw usage(`the series is too large (${total} bytes, limit ${MAX_SERIES_BYTES})`);
  const typed = out.map((f) => f.position).filter((p): p is number => p !== null);
  if (typed.length === out.length && new Set(typed).size === 1) throw usage(`every frame is at the same position (${typed[0]}): step the focuser between frames`);
  let step: number | null = null;
  if (stepUnitUm !== null && stepUnitUm !== undefined) {
    if (typeof stepUnitUm !== 'number' || !Number.isFinite(stepUnitUm) || stepUnitUm <= 0 || stepUnitUm > 10_000) throw usage('the focuser step must be a number of µm above 0 (at most 10 000)');
    step = stepUnitUm;
  }
  let wl: number | undefined;
  if (wavelengthNm !== null && wavelengthNm !== undefined) {
    if (typeof wavelengthNm !== 'number' || !Number.isFinite(wavelengthNm) || wavelengthNm < 200 || wavelengthNm > 2000) throw usage('the wavelength is in nanometres, 200 to 2000');
    wl = wavelengthNm;
  }
  return { frames: out, stepUnitUm: step, optics: optics(o), wavelengthNm: wl };
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
