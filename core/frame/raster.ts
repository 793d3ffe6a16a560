/**
 * TIFF, PNG and JPEG through sharp (libvips). PNG and TIFF samples are kept exactly as
 * stored (8/16-bit integers, or 32-bit float TIFF), taken to be linear; JPEG, an 8-bit
 * sRGB-encoded format, is decoded to linear light (IEC 61966-2-1). Colour becomes one
 * plane as in colour.ts. Pixels stay in storage order (first stored row = y 0, shown at the top).
 *
 * Pitfall, measured with sharp 0.35.5: `.raw({ depth: 'ushort' })` alone turns 16-bit grey
 * into 3 channels and 16-bit RGB into 8-bit-range values; `.toColourspace(meta.space)`
 * first keeps the samples bit-exact. Embedded ICC profiles are ignored (no colour transform).
 */
import type { Metadata, OutputInfo } from 'sharp';
import { unreadable } from '../errors.ts';
import { interleavedToPlane, srgbLinearTable8 } from './colour.ts';
import { exifPixelSizeUm, parseExif } from './exif.ts';
import { MAX_FRAME_PIXELS } from './limits.ts';
import type { Frame, OpticsHints } from './types.ts';

type Sharp = typeof import('sharp').default;

// loaded on first use: the native library takes ~0.2 s to load, which FITS and raw runs skip
let sharpLib: Sharp | null = null;
async function loadSharp(): Promise<Sharp> {
  return (sharpLib ??= (await import('sharp')).default);
}

type RasterFormat = 'png' | 'tiff' | 'jpeg';

/** Magic bytes: PNG (RFC 2083 signature), TIFF ("II*\0" / "MM\0*", TIFF 6.0 §2), JPEG (SOI FFD8 + marker FF). */
export function rasterFormatOf(b: Uint8Array): RasterFormat | null {
  if (b.length >= 8 && b[0] === 0x89 && b[1] === 0x50 && b[2] === 0x4e && b[3] === 0x47 && b[4] === 0x0d && b[5] === 0x0a && b[6] === 0x1a && b[7] === 0x0a) return 'png';
  if (b.length >= 4 && ((b[0] === 0x49 && b[1] === 0x49 && b[2] === 0x2a && b[3] === 0x00) || (b[0] === 0x4d && b[1] === 0x4d && b[2] === 0x00 && b[3] === 0x2a))) return 'tiff';
  if (b.length >= 3 && b[0] === 0xff && b[1] === 0xd8 && b[2] === 0xff) return 'jpeg';
  return null;
}

const GREY_SPACES = new Set(['b-w', 'grey16']);
const RGB_SPACES = new Set(['srgb', 'rgb16', 'rgb', 'scrgb']);

function oneLine(err: unknown): string {
  const m = err instanceof Error ? err.message : String(err);
  return (m.split('\n').find((l) => l.trim() !== '') ?? 'unknown error').trim();
}

let lut8: Float32Array | null = null;

export async function decodeRaster(bytes: Uint8Array): Promise<Frame> {
  if (bytes.length === 0) throw unreadable('empty file');
  const fmt = rasterFormatOf(bytes);
  if (!fmt) throw unreadable('not a TIFF, PNG or JPEG image');
  const label = fmt.toUpperCase();
  // failOn 'error': truncated or corrupt pixel data is refused; harmless warnings are not.
  const opts = { limitInputPixels: MAX_FRAME_PIXELS, failOn: 'error' as const, ignoreIcc: true };
  let sharp: Sharp;
  try {
    sharp = await loadSharp();
  } catch (err) {
    throw unreadable(`cannot read ${label} images here: the image library (sharp) did not load: ${oneLine(err)}`);
  }
  let meta: Metadata;
  try {
    // Header only (no pixel buffer), so the size check below can give its own message.
    meta = await sharp(bytes, { ...opts, limitInputPixels: false }).metadata();
  } catch (err) {
    throw unreadable(`unreadable ${label} image: ${oneLine(err)}`);
  }
  const { width, height } = meta;
  if (!(width > 0) || !(height > 0)) throw unreadable(`unreadable ${label} image: no image size in the file`);
  if (width * height > MAX_FRAME_PIXELS) throw unreadable(`image too large: ${width} x ${height} pixels exceeds the limit of ${MAX_FRAME_PIXELS} pixels`);
  const space = meta.space;
  const colour: 1 | 3 | 0 = GREY_SPACES.has(space) ? 1 : RGB_SPACES.has(space) ? 3 : 0;
  if (!colour) throw unreadable(`unsupported ${label} colour space "${space}" (grey and RGB are read)`);
  const depth = meta.depth;
  if (depth !== 'uchar' && depth !== 'ushort' && depth !== 'float') {
    throw unreadable(`unsupported ${label} sample type "${depth}" (8-bit, 16-bit and 32-bit float are read)`);
  }
  if (fmt === 'jpeg' && depth !== 'uchar') throw unreadable(`unsupported JPEG sample type "${depth}" (8-bit JPEG is read)`);

  let raw: { data: Buffer; info: OutputInfo };
  try {
    raw = await sharp(bytes, opts).toColourspace(space).raw({ depth }).toBuffer({ resolveWithObject: true });
  } catch (err) {
    throw unreadable(`unreadable ${label} image: ${oneLine(err)}`);
  }
  const { info } = raw;
  if (info.width !== width || info.height !== height || info.channels < colour) {
    throw unreadable(`unreadable ${label} image: decoder returned ${info.width} x ${info.height} x ${info.channels}, expected ${width} x ${height} x ${colour}`);
  }
  const n = width * height;
  const bytesPer = depth === 'uchar' ? 1 : depth === 'ushort' ? 2 : 4;
  if (raw.data.length !== n * info.channels * bytesPer) throw unreadable(`unreadable ${label} image: pixel data has the wrong length`);
  // Typed views need alignment; copy only when the buffer is not aligned.
  let buf = raw.data;
  if (buf.byteOffset % bytesPer !== 0) buf = Buffer.from(buf);
  const samples = depth === 'uchar'
    ? new Uint8Array(buf.buffer, buf.byteOffset, buf.length)
    : depth === 'ushort'
      ? new Uint16Array(buf.buffer, buf.byteOffset, buf.length / 2)
      : new Float32Array(buf.buffer, buf.byteOffset, buf.length / 4);

  const storedMax = depth === 'uchar' ? 255 : depth === 'ushort' ? 65535 : null;
  let lut: Float32Array | null = null;
  if (fmt === 'jpeg') lut = lut8 ??= srgbLinearTable8();
  // JPEG code 255 maps to linear 255 (scale chosen so that white keeps its value).
  const saturationLevel = storedMax;
  const data = interleavedToPlane(n, info.channels, colour, samples, lut, storedMax, saturationLevel);

  const m: Record<string, string | number | boolean> = {
    channels: info.channels,
    space,
    depth,
  };
  if (meta.bitsPerSample !== undefined) m.bitsPerSample = meta.bitsPerSample;
  if (meta.pages !== undefined && meta.pages > 1) m.pages = meta.pages;
  if (meta.hasProfile) m.iccProfileIgnored = true;
  m.transfer = fmt === 'jpeg' ? 'sRGB decoded to linear' : 'as stored (taken as linear)';

  let hints: OpticsHints | null = null;
  const exif = meta.exif ? parseExif(meta.exif) : null;
  if (exif) {
    const camera = [exif.make, exif.model].filter((s) => s).join(' ');
    if (camera) m.camera = camera;
    if (exif.lensModel) m.lens = exif.lensModel;
    if (exif.exposureTimeS !== undefined) m.exposureTimeS = exif.exposureTimeS;
    if (exif.iso !== undefined) m.iso = exif.iso;
    if (exif.dateTimeOriginal) m.dateTimeOriginal = exif.dateTimeOriginal;
    if (exif.orientation !== undefined) m.orientation = exif.orientation;
    const h: OpticsHints = { from: 'exif' };
    const kw: NonNullable<OpticsHints['keywords']> = {};
    if (exif.focalLengthMm !== undefined && exif.focalLengthMm > 0) { h.focalLengthMm = exif.focalLengthMm; kw.focalLengthMm = 'FocalLength'; }
    if (exif.fNumber !== undefined && exif.fNumber > 0) { h.fNumber = exif.fNumber; kw.fNumber = 'FNumber'; }
    const px = exifPixelSizeUm(exif, width);
    if (px !== undefined) { h.pixelSizeUm = px; kw.pixelSizeUm = 'FocalPlaneXResolution'; }
    if (Object.keys(kw).length) h.keywords = kw;
    if (camera) h.camera = camera;
    if (Object.keys(h).length > 1) hints = h;
  }

  return {
    width,
    height,
    data,
    format: fmt,
    saturationLevel,
    cfa: null,
    displayTopRow: 'first',
    hints,
    meta: m,
  };
}
