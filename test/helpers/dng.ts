/**
 * A minimal DNG writer for tests, from the TIFF 6.0 specification (header, 12-byte IFD entries
 * sorted by tag, values over 4 bytes stored by offset) and Adobe's DNG Specification 1.4
 * (PhotometricInterpretation 32803 = CFA, CFARepeatPatternDim/CFAPattern with 0 = red,
 * 1 = green, 2 = blue, DNGVersion, UniqueCameraModel, BlackLevel, WhiteLevel, ColorMatrix1)
 * and EXIF 2.3 tags for the optics. Tag numbers from memory of those documents.
 * One uncompressed 16-bit strip, little-endian; the raw image in IFD 0.
 */

export interface DngOptions {
  width: number;
  height: number;
  /** Stored sensor values, row-major, first row first. */
  data: Uint16Array;
  /** The repeating mosaic from the top left, row by row: 4 letters (2x2, e.g. 'RGGB') or 36 (6x6, X-Trans). */
  cfa: string;
  black?: number;
  white?: number;
  make?: string;
  model?: string;
  focalLengthMm?: number;
  fNumber?: number;
  exposureS?: number;
  iso?: number;
  /** FocalPlaneXResolution/YResolution in pixels per cm (unit 3). */
  focalPlanePxPerCm?: number;
}

type Entry = { tag: number; type: number; values: number[] | string };

const SIZE: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 10: 8 };

function rational(v: number): [number, number] {
  const den = 10000;
  return [Math.round(v * den), den];
}

/** Lays out one IFD at `at`; returns its bytes (entries, next-IFD 0, then out-of-line values). */
function ifd(entries: Entry[], at: number): Uint8Array {
  entries.sort((a, b) => a.tag - b.tag);
  const head = 2 + entries.length * 12 + 4;
  const extra: number[] = [];
  const out = new Uint8Array(head + 4096);
  const dv = new DataView(out.buffer);
  dv.setUint16(0, entries.length, true);
  let extraAt = at + head;
  entries.forEach((e, i) => {
    const p = 2 + i * 12;
    const bytes: number[] = [];
    const put = (v: number, size: number, signed = false) => {
      const b = new DataView(new ArrayBuffer(size));
      if (size === 1) b.setUint8(0, v);
      else if (size === 2) b.setUint16(0, v, true);
      else if (signed) b.setInt32(0, v, true);
      else b.setUint32(0, v, true);
      for (let k = 0; k < size; k++) bytes.push(b.getUint8(k));
    };
    let count: number;
    if (typeof e.values === 'string') {
      for (const c of e.values) bytes.push(c.charCodeAt(0));
      bytes.push(0);
      count = bytes.length;
    } else if (e.type === 5 || e.type === 10) {
      for (const v of e.values) { const [n, d] = rational(v); put(n, 4, e.type === 10); put(d, 4); }
      count = e.values.length;
    } else {
      for (const v of e.values) put(v, SIZE[e.type]);
      count = e.values.length;
    }
    dv.setUint16(p, e.tag, true);
    dv.setUint16(p + 2, e.type, true);
    dv.setUint32(p + 4, count, true);
    if (bytes.length <= 4) bytes.forEach((b, k) => dv.setUint8(p + 8 + k, b));
    else {
      if (extraAt % 2) { extra.push(0); extraAt++; } // word alignment (TIFF 6.0)
      dv.setUint32(p + 8, extraAt, true);
      extra.push(...bytes);
      extraAt += bytes.length;
    }
  });
  dv.setUint32(2 + entries.length * 12, 0, true);
  out.set(extra, head);
  return out.subarray(0, head + extra.length);
}

const CFA_CODE: Record<string, number> = { R: 0, G: 1, B: 2 };

export function makeDng(o: DngOptions): Uint8Array {
  const { width, height, data } = o;
  if (data.length !== width * height) throw new Error('makeDng: data size');
  const exifEntries: Entry[] = [];
  if (o.exposureS !== undefined) exifEntries.push({ tag: 33434, type: 5, values: [o.exposureS] });
  if (o.fNumber !== undefined) exifEntries.push({ tag: 33437, type: 5, values: [o.fNumber] });
  if (o.iso !== undefined) exifEntries.push({ tag: 34855, type: 3, values: [o.iso] });
  if (o.focalLengthMm !== undefined) exifEntries.push({ tag: 37386, type: 5, values: [o.focalLengthMm] });
  if (o.focalPlanePxPerCm !== undefined) {
    exifEntries.push({ tag: 41486, type: 5, values: [o.focalPlanePxPerCm] });
    exifEntries.push({ tag: 41487, type: 5, values: [o.focalPlanePxPerCm] });
    exifEntries.push({ tag: 41488, type: 3, values: [3] });
  }
  const model = o.model ?? 'Test Camera';
  const main = (stripAt: number, exifAt: number): Entry[] => [
    { tag: 254, type: 4, values: [0] },
    { tag: 256, type: 4, values: [width] },
    { tag: 257, type: 4, values: [height] },
    { tag: 258, type: 3, values: [16] },
    { tag: 259, type: 3, values: [1] },
    { tag: 262, type: 3, values: [32803] },
    { tag: 271, type: 2, values: o.make ?? 'Skyloupe' },
    { tag: 272, type: 2, values: model },
    { tag: 273, type: 4, values: [stripAt] },
    { tag: 274, type: 3, values: [1] },
    { tag: 277, type: 3, values: [1] },
    { tag: 278, type: 4, values: [height] },
    { tag: 279, type: 4, values: [width * height * 2] },
    { tag: 284, type: 3, values: [1] },
    { tag: 33421, type: 3, values: o.cfa.length === 36 ? [6, 6] : [2, 2] },
    { tag: 33422, type: 1, values: Array.from(o.cfa, (c) => CFA_CODE[c]) },
    ...(exifEntries.length ? [{ tag: 34665, type: 4, values: [exifAt] }] : []),
    { tag: 50706, type: 1, values: [1, 4, 0, 0] },
    { tag: 50708, type: 2, values: model },
    { tag: 50714, type: 4, values: [o.black ?? 0] },
    { tag: 50717, type: 4, values: [o.white ?? 65535] },
    // sRGB-ish XYZ->camera matrix (any invertible matrix will do for the mosaic itself)
    { tag: 50721, type: 10, values: [3.2406, -1.5372, -0.4986, -0.9689, 1.8758, 0.0415, 0.0557, -0.204, 1.057] },
    { tag: 50778, type: 3, values: [21] },
  ];
  // Two passes: sizes first, then offsets.
  const ifd0Probe = ifd(main(0, 0), 8);
  const exifAt = 8 + ifd0Probe.length + (ifd0Probe.length % 2);
  const exifBytes = exifEntries.length ? ifd(exifEntries, exifAt) : new Uint8Array(0);
  let stripAt = exifAt + exifBytes.length;
  stripAt += stripAt % 2;
  const ifd0 = ifd(main(stripAt, exifAt), 8);
  if (ifd0.length !== ifd0Probe.length) throw new Error('makeDng: layout changed');
  const out = new Uint8Array(stripAt + width * height * 2);
  const dv = new DataView(out.buffer);
  out.set([0x49, 0x49, 42, 0], 0);
  dv.setUint32(4, 8, true);
  out.set(ifd0, 8);
  out.set(exifBytes, exifAt);
  for (let i = 0; i < data.length; i++) dv.setUint16(stripAt + 2 * i, data[i], true);
  return out;
}
