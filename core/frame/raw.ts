/**
 * Camera raw files (CR2, CR3, NEF, ARW, RAF, ORF, RW2, DNG, ...) through LibRaw (libraw-wasm)
 * in a worker thread: the undemosaiced sensor mosaic, cropped to the visible area, black level
 * subtracted, with the colour-filter layout, the white level (saturation) and the optics from the
 * metadata. No demosaicing: the measured plane sums 2x2 Bayer blocks (plane.ts). Fuji X-Trans
 * (6x6 pattern) is summed here in 3x3 blocks, each holding 5 green, 2 red and 2 blue pixels
 * [the X-Trans layout, from memory], so again no interpolation touches a star.
 */
import { Worker } from 'node:worker_threads';
import { unreadable } from '../errors.ts';
import { parseExif } from './exif.ts';
import { MAX_FRAME_PIXELS } from './limits.ts';
import type { CfaPattern, Frame, OpticsHints } from './types.ts';

interface RawMeta {
  width: number; height: number; raw_width: number; raw_height: number; top_margin: number; left_margin: number;
  flip: number; camera_make: string; camera_model: string; iso_speed: number; shutter: number; aperture: number;
  focal_len: number; timestamp: number; filters: number; cdesc: string; colors: number; is_foveon: number;
  black: number; maximum: number; cblack: number[] | null; lens: string;
}
interface RawPixels { raw_width: number; raw_height: number; top_margin: number; left_margin: number; width: number; height: number; data: Uint16Array }
type Reply = { id: number; ok: true; meta: RawMeta; raw: RawPixels } | { id: number; ok: false; error: string };

let worker: Worker | null = null;
let nextId = 1;
const pending = new Map<number, { resolve: (r: Reply) => void; reject: (e: unknown) => void }>();

function getWorker(): Worker {
  if (worker) return worker;
  const w = new Worker(new URL('./raw-worker.mjs', import.meta.url));
  w.unref(); // an idle decoder never keeps the process alive
  w.on('message', (r: Reply) => { const p = pending.get(r.id); if (p) { pending.delete(r.id); p.resolve(r); } });
  const fail = (err: unknown) => {
    if (worker === w) worker = null;
    for (const [id, p] of pending) { pending.delete(id); p.reject(err); }
  };
  w.on('error', fail);
  w.on('exit', () => fail(unreadable('the raw decoder stopped')));
  worker = w;
  return w;
}

/** Time allowed for one decode: generous for large files, short enough to catch a file that never ends. */
function timeoutMs(bytes: number): number {
  return 10_000 + bytes / 1e6 * 200;
}

async function runLibRaw(bytes: Uint8Array): Promise<Reply> {
  const w = getWorker();
  const id = nextId++;
  return new Promise<Reply>((resolve, reject) => {
    const timer = setTimeout(() => {
      pending.delete(id);
      if (worker === w) worker = null;
      void w.terminate();
      reject(unreadable(`camera raw decoding did not finish within ${(timeoutMs(bytes.length) / 1000).toFixed(0)} s (damaged file?)`));
    }, timeoutMs(bytes.length));
    w.ref();
    pending.set(id, {
      resolve: (r) => { clearTimeout(timer); if (pending.size === 0) w.unref(); resolve(r); },
      reject: (e) => { clearTimeout(timer); reject(e); },
    });
    w.postMessage({ id, bytes });
  });
}

/** Stops the decoder thread (tests; the thread is unref'd and never blocks exit anyway). */
export async function closeRawDecoder(): Promise<void> {
  const w = worker;
  worker = null;
  if (w) await w.terminate();
}

/** dcraw/LibRaw colour index at (row, col) of the visible image from the 32-bit `filters` word. */
function fc(filters: number, row: number, col: number): number {
  return (filters >>> ((((row << 1) & 14) | (col & 1)) << 1)) & 3;
}

/** 2x2 Bayer layout at visible (0, 0), or 'xtrans', or null for anything else. */
function layout(meta: RawMeta): CfaPattern | 'xtrans' | null {
  const f = meta.filters >>> 0;
  if (f === 9) return 'xtrans'; // LibRaw's marker for the 6x6 Fuji pattern [LibRaw docs, from memory]
  if (f < 1000 || meta.colors !== 3) return null;
  if (f !== ((f & 0xff) * 0x01010101) >>> 0) return null; // not a 2-row period
  const cd = meta.cdesc || 'RGBG';
  const letter = (c: number) => (cd[c] === 'G' || c === 3 ? 'G' : cd[c]);
  const p = letter(fc(f, 0, 0)) + letter(fc(f, 0, 1)) + letter(fc(f, 1, 0)) + letter(fc(f, 1, 1));
  return (['RGGB', 'BGGR', 'GRBG', 'GBRG'] as string[]).includes(p) ? (p as CfaPattern) : null;
}

/** Pixel pitch from EXIF FocalPlaneXResolution: sensor width = PixelXDimension / resolution (EXIF 2.3). */
function exifPitchUm(bytes: Uint8Array, visibleWidth: number): { pitch?: number; lens?: string } {
  const info = parseExif(bytes);
  if (!info) return {};
  const res = info.focalPlaneXResolution;
  const unit = info.focalPlaneResolutionUnit ?? 2;
  const um = unit === 2 ? 25400 : unit === 3 ? 10000 : unit === 4 ? 1000 : undefined;
  if (res === undefined || !(res > 0) || um === undefined) return { lens: info.lensModel };
  const pxAcross = info.pixelXDimension && info.pixelXDimension > 0 ? info.pixelXDimension : visibleWidth;
  const sensorUm = (pxAcross / res) * um;
  const pitch = sensorUm / visibleWidth;
  return { pitch: pitch > 0.3 && pitch < 100 ? pitch : undefined, lens: info.lensModel };
}

/** Decodes a camera raw file held in memory. */
export async function decodeRaw(bytes: Uint8Array): Promise<Frame> {
  const reply = await runLibRaw(bytes);
  if (!reply.ok) throw unreadable(`camera raw file could not be decoded: ${reply.error}`);
  const { meta, raw } = reply;
  if (meta.is_foveon) throw unreadable('Foveon raw files have no colour-filter mosaic and are not read');
  const { width, height, top_margin: top, left_margin: left, raw_width: rw, raw_height: rh } = raw;
  if (!(width > 0 && height > 0) || top < 0 || left < 0 || top + height > rh || left + width > rw || raw.data.length < rw * rh) {
    throw unreadable(`camera raw file has inconsistent sizes (${width} x ${height} visible in ${rw} x ${rh})`);
  }
  if (width * height > MAX_FRAME_PIXELS) throw unreadable(`image too large: ${width} x ${height} pixels`);
  const pattern = layout(meta);
  if (pattern === null) throw unreadable(`unsupported colour-filter layout in this raw file (filters 0x${(meta.filters >>> 0).toString(16)}, ${meta.colors} colours)`);

  // Black level: the overall level plus the per-channel offsets (LibRaw black + cblack[c]).
  const black = Number.isFinite(meta.black) ? meta.black : 0;
  const cb = meta.cblack && meta.cblack.length === 4 && meta.cblack.every(Number.isFinite) ? meta.cblack : [0, 0, 0, 0];
  const white = meta.maximum > 0 ? meta.maximum : 65535;
  const maxBlack = black + Math.max(...cb);
  const sat = white - maxBlack;
  if (!(sat > 0)) throw unreadable(`camera raw levels are inconsistent (black ${black}, white ${white})`);

  const src = raw.data;
  let data: Float32Array;
  let outW = width, outH = height;
  let cfa: CfaPattern | null = null;
  let binning = 1;
  if (pattern === 'xtrans') {
    // 3x3 sums; saturation 9x, a block with any clipped pixel counts as clipped.
    outW = Math.floor(width / 3); outH = Math.floor(height / 3); binning = 3;
    if (outW < 1 || outH < 1) throw unreadable('camera raw image too small');
    data = new Float32Array(outW * outH);
    for (let y = 0; y < outH; y++) {
      for (let x = 0; x < outW; x++) {
        let s = 0, clipped = false;
        for (let dy = 0; dy < 3; dy++) {
          const o = (top + 3 * y + dy) * rw + left + 3 * x;
          for (let dx = 0; dx < 3; dx++) { const v = src[o + dx] - black; if (v >= sat) clipped = true; s += v; }
        }
        data[y * outW + x] = clipped ? 9 * sat : s;
      }
    }
  } else {
    cfa = pattern;
    data = new Float32Array(width * height);
    // Per-channel black by colour index at the visible position (fc uses visible coordinates).
    const f = meta.filters >>> 0;
    const cbAt = [[cb[fc(f, 0, 0)], cb[fc(f, 0, 1)]], [cb[fc(f, 1, 0)], cb[fc(f, 1, 1)]]];
    for (let y = 0; y < height; y++) {
      const o = (top + y) * rw + left;
      const b0 = black + cbAt[y & 1][0], b1 = black + cbAt[y & 1][1];
      const d = y * width;
      for (let x = 0; x < width; x += 2) {
        data[d + x] = src[o + x] - b0;
        if (x + 1 < width) data[d + x + 1] = src[o + x + 1] - b1;
      }
    }
  }

  const camera = [meta.camera_make, meta.camera_model].filter((s) => s && s.trim()).join(' ').trim();
  const ex = exifPitchUm(bytes, width);
  const hints: OpticsHints = { from: 'exif' };
  const kw: NonNullable<OpticsHints['keywords']> = {};
  // LibRaw takes these from the EXIF tags FocalLength and FNumber
  if (meta.focal_len > 0) { hints.focalLengthMm = meta.focal_len; kw.focalLengthMm = 'FocalLength'; }
  if (meta.aperture > 0) { hints.fNumber = Math.round(meta.aperture * 100) / 100; kw.fNumber = 'FNumber'; } // stored as float32 in LibRaw
  if (ex.pitch !== undefined) { hints.pixelSizeUm = ex.pitch * binning; kw.pixelSizeUm = 'FocalPlaneXResolution'; }
  if (Object.keys(kw).length) hints.keywords = kw;
  if (binning > 1) hints.binning = binning;
  if (camera) hints.camera = camera;

  const m: Record<string, string | number | boolean> = {
    decoder: 'LibRaw (libraw-wasm)',
    blackLevel: black,
    whiteLevel: white,
    rawWidth: rw,
    rawHeight: rh,
    visibleArea: `${width}x${height}+${left}+${top}`,
  };
  if (camera) m.camera = camera;
  const lens = meta.lens || ex.lens;
  if (lens) m.lens = lens;
  if (meta.iso_speed > 0) m.iso = meta.iso_speed;
  if (meta.shutter > 0) m.exposureTimeS = meta.shutter;
  if (meta.flip) m.orientation = meta.flip; // LibRaw flip code; the frame stays in sensor order
  if (pattern === 'xtrans') m.mosaic = 'X-Trans, summed in 3x3 blocks';

  return {
    width: outW,
    height: outH,
    data,
    format: 'raw',
    saturationLevel: pattern === 'xtrans' ? 9 * sat : sat,
    saturationSource: 'white-level',
    cfa,
    displayTopRow: 'first',
    hints: Object.keys(hints).length > 1 ? hints : null,
    meta: m,
  };
}

function u32(b: Uint8Array, at: number, le: boolean): number {
  return le ? (b[at] | (b[at + 1] << 8) | (b[at + 2] << 16) | (b[at + 3] << 24)) >>> 0 : ((b[at] << 24) | (b[at + 1] << 16) | (b[at + 2] << 8) | b[at + 3]) >>> 0;
}

/** A TIFF whose first IFD carries DNGVersion (tag 50706, DNG 1.4 spec): a DNG whatever its name. */
export function isDng(b: Uint8Array): boolean {
  if (b.length < 8) return false;
  const le = b[0] === 0x49 && b[1] === 0x49;
  if (!le && !(b[0] === 0x4d && b[1] === 0x4d)) return false;
  const ifd = u32(b, 4, le);
  if (ifd + 2 > b.length) return false;
  const n = le ? b[ifd] | (b[ifd + 1] << 8) : (b[ifd] << 8) | b[ifd + 1];
  for (let i = 0; i < Math.min(n, 1000); i++) {
    const p = ifd + 2 + 12 * i;
    if (p + 2 > b.length) return false;
    const tag = le ? b[p] | (b[p + 1] << 8) : (b[p] << 8) | b[p + 1];
    if (tag === 50706) return true;
  }
  return false;
}
