/**
 * Small EXIF reader for the few tags the optics need. EXIF is a TIFF structure
 * (TIFF 6.0 §2: "II"/"MM", 42, IFD offset; 12-byte IFD entries) with tag numbers from
 * EXIF 2.3 (CIPA DC-008) [tag numbers from memory]. Malformed EXIF gives null, never a throw:
 * the metadata is optional and the pixels may still be fine.
 */

export interface ExifInfo {
  make?: string;
  model?: string;
  lensModel?: string;
  orientation?: number;
  exposureTimeS?: number;
  fNumber?: number;
  iso?: number;
  dateTimeOriginal?: string;
  focalLengthMm?: number;
  pixelXDimension?: number;
  focalPlaneXResolution?: number;
  /** 2 = inch (EXIF default), 3 = centimetre. */
  focalPlaneResolutionUnit?: number;
}

const TYPE_SIZE: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 7: 1, 9: 4, 10: 8 };
const MAX_ENTRIES = 1000;

type Value = number | string;

function readIfd(dv: DataView, start: number, le: boolean): Map<number, Value> | null {
  const out = new Map<number, Value>();
  if (start < 8 || start + 2 > dv.byteLength) return null;
  const count = dv.getUint16(start, le);
  if (count > MAX_ENTRIES || start + 2 + count * 12 > dv.byteLength) return null;
  for (let e = 0; e < count; e++) {
    const p = start + 2 + e * 12;
    const tag = dv.getUint16(p, le);
    const type = dv.getUint16(p + 2, le);
    const n = dv.getUint32(p + 4, le);
    const size = TYPE_SIZE[type];
    if (size === undefined || n === 0) continue;
    const total = size * n;
    const at = total <= 4 ? p + 8 : dv.getUint32(p + 8, le);
    if (at + total > dv.byteLength) continue;
    switch (type) {
      case 2: { // ASCII, NUL-terminated
        let s = '';
        for (let i = 0; i < n; i++) { const c = dv.getUint8(at + i); if (c === 0) break; s += String.fromCharCode(c); }
        out.set(tag, s.trim());
        break;
      }
      case 1: case 7: out.set(tag, dv.getUint8(at)); break;
      case 3: out.set(tag, dv.getUint16(at, le)); break;
      case 4: out.set(tag, dv.getUint32(at, le)); break;
      case 9: out.set(tag, dv.getInt32(at, le)); break;
      case 5: case 10: { // (S)RATIONAL: numerator / denominator
        const num = type === 5 ? dv.getUint32(at, le) : dv.getInt32(at, le);
        const den = type === 5 ? dv.getUint32(at + 4, le) : dv.getInt32(at + 4, le);
        if (den !== 0) out.set(tag, num / den);
        break;
      }
    }
  }
  return out;
}

/** Parses an EXIF block (with or without the "Exif\0\0" APP1 prefix). */
export function parseExif(buf: Uint8Array): ExifInfo | null {
  let off = 0;
  if (buf.length >= 6 && buf[0] === 0x45 && buf[1] === 0x78 && buf[2] === 0x69 && buf[3] === 0x66 && buf[4] === 0 && buf[5] === 0) off = 6;
  if (buf.length < off + 8) return null;
  const dv = new DataView(buf.buffer, buf.byteOffset + off, buf.length - off);
  const bo = dv.getUint16(0, false);
  if (bo !== 0x4949 && bo !== 0x4d4d) return null;
  const le = bo === 0x4949;
  if (dv.getUint16(2, le) !== 42) return null;
  const ifd0 = readIfd(dv, dv.getUint32(4, le), le);
  if (!ifd0) return null;
  const ptr = ifd0.get(0x8769); // ExifIFDPointer
  const ex = typeof ptr === 'number' ? readIfd(dv, ptr, le) ?? new Map<number, Value>() : new Map<number, Value>();
  const info: ExifInfo = {};
  const str = (m: Map<number, Value>, t: number): string | undefined => { const v = m.get(t); return typeof v === 'string' && v !== '' ? v : undefined; };
  const num = (m: Map<number, Value>, t: number): number | undefined => { const v = m.get(t); return typeof v === 'number' && Number.isFinite(v) ? v : undefined; };
  const set = <K extends keyof ExifInfo>(k: K, v: ExifInfo[K] | undefined): void => { if (v !== undefined) info[k] = v; };
  set('make', str(ifd0, 0x010f));
  set('model', str(ifd0, 0x0110));
  set('orientation', num(ifd0, 0x0112));
  set('exposureTimeS', num(ex, 0x829a));
  set('fNumber', num(ex, 0x829d));
  set('iso', num(ex, 0x8827));
  set('dateTimeOriginal', str(ex, 0x9003));
  set('focalLengthMm', num(ex, 0x920a));
  set('pixelXDimension', num(ex, 0xa002));
  set('focalPlaneXResolution', num(ex, 0xa20e));
  set('focalPlaneResolutionUnit', num(ex, 0xa210));
  set('lensModel', str(ex, 0xa434));
  return info;
}

/**
 * Pixel pitch in µm from FocalPlaneXResolution (pixels per unit on the sensor), trusted only
 * when PixelXDimension says the image is at full sensor resolution (resized images keep the
 * sensor's figure). Units: 2 = inch (25400 µm), 3 = cm (10000 µm).
 */
export function exifPixelSizeUm(info: ExifInfo, imageWidth: number): number | undefined {
  const res = info.focalPlaneXResolution;
  if (res === undefined || !(res > 0) || info.pixelXDimension !== imageWidth) return undefined;
  const unit = info.focalPlaneResolutionUnit ?? 2;
  const um = unit === 2 ? 25400 : unit === 3 ? 10000 : undefined;
  return um === undefined ? undefined : um / res;
}
