// TIFF/PNG/JPEG decoding. Encoders outside the code under test: sharp/libvips (libpng, libtiff,
// libjpeg) writing known arrays, plus files built here byte by byte from TIFF 6.0 (float TIFF,
// SampleFormat = 3), PNG (RFC 2083 IHDR) and EXIF 2.3 (CIPA DC-008, APP1 "Exif\0\0" + TIFF IFDs;
// tag numbers from memory). sRGB decoding checked against the IEC 61966-2-1 formula.
import sharp from 'sharp';
import { crc32, deflateSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { SkyloupeError } from '../../core/errors.ts';
import { parseExif } from '../../core/frame/exif.ts';
import { decodeRaster } from '../../core/frame/raster.ts';

const W = 13;
const H = 7;
const N = W * H;

function pseudoRandom16(n: number, seed: number): Uint16Array {
  const a = new Uint16Array(n);
  let s = seed >>> 0;
  for (let i = 0; i < n; i++) { s = (Math.imul(s, 1664525) + 1013904223) >>> 0; a[i] = s >>> 16; }
  return a;
}

async function encode(samples: Uint16Array | Uint8Array, channels: 1 | 2 | 3 | 4, fmt: 'png' | 'tiff'): Promise<Uint8Array> {
  const sixteen = samples instanceof Uint16Array;
  const space = channels <= 2 ? (sixteen ? 'grey16' : 'b-w') : (sixteen ? 'rgb16' : 'srgb');
  const img = sharp(samples, { raw: { width: W, height: H, channels } }).toColourspace(space);
  return fmt === 'png' ? img.png().toBuffer() : img.tiff({ compression: 'lzw' }).toBuffer();
}

async function refusal(bytes: Uint8Array): Promise<SkyloupeError> {
  try { await decodeRaster(bytes); } catch (e) { if (e instanceof SkyloupeError) return e; throw e; }
  throw new Error('expected a SkyloupeError');
}

/** IEC 61966-2-1 sRGB decoding, written out here independently of core/frame/colour.ts. */
const iec = (v8: number): number => { const v = v8 / 255; return v <= 0.04045 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4; };

describe('lossless PNG and TIFF', () => {
  for (const fmt of ['png', 'tiff'] as const) {
    it(`16-bit grey ${fmt}: every sample back exactly`, async () => {
      const src = pseudoRandom16(N, 1);
      src[0] = 0; src[1] = 65535; src[2] = 1;
      const f = await decodeRaster(await encode(src, 1, fmt));
      expect([f.width, f.height, f.format, f.saturationLevel, f.displayTopRow, f.cfa]).toEqual([W, H, fmt, 65535, 'first', null]);
      let bad = 0;
      for (let i = 0; i < N; i++) if (f.data[i] !== src[i]) bad++;
      expect(bad).toBe(0);
    });

    it(`16-bit RGB ${fmt}: luminance = mean of R, G, B exactly; one clipped channel keeps the pixel clipped`, async () => {
      const src = pseudoRandom16(3 * N, 2);
      for (let i = 0; i < 3 * N; i++) src[i] = Math.min(src[i], 60000);
      src[3 * 5 + 1] = 65535; // pixel 5: green clipped
      const f = await decodeRaster(await encode(src, 3, fmt));
      let bad = 0;
      for (let i = 0; i < N; i++) {
        const want = i === 5 ? 65535 : Math.fround((src[3 * i] + src[3 * i + 1] + src[3 * i + 2]) / 3);
        if (f.data[i] !== want) bad++;
      }
      expect(bad).toBe(0);
    });

    it(`8-bit grey and RGB ${fmt} exactly`, async () => {
      const g = new Uint8Array(N).map((_, i) => (i * 37) % 256);
      const fg = await decodeRaster(await encode(g, 1, fmt));
      expect(Array.from(fg.data)).toEqual(Array.from(g));
      expect(fg.saturationLevel).toBe(255);
      const c = new Uint8Array(3 * N).map((_, i) => (i * 53) % 255);
      const fc = await decodeRaster(await encode(c, 3, fmt));
      let bad = 0;
      for (let i = 0; i < N; i++) if (fc.data[i] !== Math.fround((c[3 * i] + c[3 * i + 1] + c[3 * i + 2]) / 3)) bad++;
      expect(bad).toBe(0);
    });
  }

  it('alpha is ignored (16-bit grey + alpha PNG, RGBA PNG)', async () => {
    const ga = pseudoRandom16(2 * N, 3);
    const f = await decodeRaster(await encode(ga, 2, 'png'));
    let bad = 0;
    for (let i = 0; i < N; i++) if (f.data[i] !== ga[2 * i]) bad++;
    expect(bad).toBe(0);
    const rgba = pseudoRandom16(4 * N, 4).map((v) => Math.min(v, 60000));
    const f4 = await decodeRaster(await encode(rgba, 4, 'png'));
    bad = 0;
    for (let i = 0; i < N; i++) if (f4.data[i] !== Math.fround((rgba[4 * i] + rgba[4 * i + 1] + rgba[4 * i + 2]) / 3)) bad++;
    expect(bad).toBe(0);
  });

  it('32-bit float TIFF (built per TIFF 6.0 with SampleFormat = 3) exactly, no saturation level', async () => {
    const vals = Array.from({ length: N }, (_, i) => (i - 40) * 0.37);
    const f = await decodeRaster(floatTiff(W, H, vals));
    expect(f.saturationLevel).toBeNull();
    let bad = 0;
    for (let i = 0; i < N; i++) if (f.data[i] !== Math.fround(vals[i])) bad++;
    expect(bad).toBe(0);
  });
});

describe('JPEG: sRGB decoded to linear (IEC 61966-2-1)', () => {
  it('flat grey levels follow the IEC formula, scaled so that 255 stays 255', async () => {
    for (const v of [0, 5, 10, 11, 50, 128, 200, 255]) {
      // a flat 8-bit block is coded exactly at quality 100 (DC term only)
      const jpg = await sharp(new Uint8Array(16 * 16).fill(v), { raw: { width: 16, height: 16, channels: 1 } }).toColourspace('b-w').jpeg({ quality: 100 }).toBuffer();
      const f = await decodeRaster(jpg);
      expect(f.format).toBe('jpeg');
      expect(f.data[37]).toBeCloseTo(255 * iec(v), 4);
    }
  });

  it('check values: sRGB 128 -> 0.2158605 and 10 -> 0.0030353 (linear segment) [from memory, common tables]', async () => {
    const one = async (v: number): Promise<number> => (await decodeRaster(await sharp(new Uint8Array(64).fill(v), { raw: { width: 8, height: 8, channels: 1 } }).toColourspace('b-w').jpeg({ quality: 100 }).toBuffer())).data[0] / 255;
    expect(await one(128)).toBeCloseTo(0.2158605, 6);
    expect(await one(10)).toBeCloseTo(0.0030353, 6);
  });

  it('flat RGB colour: mean of the linearised channels', async () => {
    const c = new Uint8Array(16 * 16 * 3);
    for (let i = 0; i < 256; i++) { c[3 * i] = 200; c[3 * i + 1] = 100; c[3 * i + 2] = 50; }
    const jpg = await sharp(c, { raw: { width: 16, height: 16, channels: 3 } }).jpeg({ quality: 100, chromaSubsampling: '4:4:4' }).toBuffer();
    const f = await decodeRaster(jpg);
    expect(f.data[100]).toBeCloseTo((255 * (iec(200) + iec(100) + iec(50))) / 3, 3);
    expect(f.saturationLevel).toBe(255);
  });
});

/** Minimal little-endian baseline TIFF, one uncompressed strip of 32-bit IEEE floats, one sample per pixel. */
function floatTiff(w: number, h: number, vals: number[]): Uint8Array {
  const tags: [number, number, number][] = [ // tag, type (3 SHORT, 4 LONG), value
    [256, 4, w], [257, 4, h], [258, 3, 32], [259, 3, 1], [262, 3, 1], [273, 4, 0], [277, 3, 1], [278, 4, h], [279, 4, w * h * 4], [339, 3, 3],
  ];
  const ifd = 8;
  const dataOff = ifd + 2 + tags.length * 12 + 4;
  const dv = new DataView(new ArrayBuffer(dataOff + w * h * 4));
  dv.setUint16(0, 0x4949, true); dv.setUint16(2, 42, true); dv.setUint32(4, ifd, true);
  dv.setUint16(ifd, tags.length, true);
  tags.forEach(([tag, type, value], k) => {
    const p = ifd + 2 + 12 * k;
    dv.setUint16(p, tag, true); dv.setUint16(p + 2, type, true); dv.setUint32(p + 4, 1, true);
    const v = tag === 273 ? dataOff : value;
    if (type === 3) dv.setUint16(p + 8, v, true); else dv.setUint32(p + 8, v, true);
  });
  vals.forEach((v, i) => dv.setFloat32(dataOff + 4 * i, v, true));
  return new Uint8Array(dv.buffer);
}

/** Big-endian ("MM") EXIF block: IFD0 (Make, Model, ExifIFD pointer) and an Exif IFD. */
function exifBlock(make: string, model: string, exif: [number, 3 | 4 | 5, number, number?][]): Uint8Array {
  const bytes: number[] = [];
  const u16 = (v: number): void => { bytes.push((v >> 8) & 255, v & 255); };
  const u32 = (v: number): void => { bytes.push((v >>> 24) & 255, (v >>> 16) & 255, (v >>> 8) & 255, v & 255); };
  const ifd0Off = 8;
  const ifd0Size = 2 + 3 * 12 + 4;
  const strOff = ifd0Off + ifd0Size;
  const makeZ = make + '\0';
  const modelZ = model + '\0';
  const exifOff = strOff + makeZ.length + modelZ.length;
  const exifSize = 2 + exif.length * 12 + 4;
  let ratOff = exifOff + exifSize;
  bytes.push(0x4d, 0x4d); u16(42); u32(ifd0Off);
  u16(3);
  u16(0x010f); u16(2); u32(makeZ.length); u32(strOff);
  u16(0x0110); u16(2); u32(modelZ.length); u32(strOff + makeZ.length);
  u16(0x8769); u16(4); u32(1); u32(exifOff);
  u32(0);
  for (const ch of makeZ + modelZ) bytes.push(ch.charCodeAt(0));
  const rationals: number[] = [];
  u16(exif.length);
  for (const [tag, type, a, b] of exif) {
    u16(tag); u16(type); u32(1);
    if (type === 3) { u16(a); u16(0); } else if (type === 4) u32(a);
    else { u32(ratOff); ratOff += 8; rationals.push(a, b ?? 1); }
  }
  u32(0);
  for (const r of rationals) u32(r);
  return new Uint8Array(bytes);
}

/** Inserts an APP1 EXIF segment right after the JPEG SOI marker. */
function withApp1(jpeg: Uint8Array, tiff: Uint8Array): Uint8Array {
  const payload = [0x45, 0x78, 0x69, 0x66, 0, 0, ...tiff]; // "Exif\0\0"
  const len = payload.length + 2;
  return new Uint8Array([0xff, 0xd8, 0xff, 0xe1, len >> 8, len & 255, ...payload, ...jpeg.subarray(2)]);
}

describe('EXIF optics hints', () => {
  it('hand-built big-endian EXIF: focal length, f-number, pixel pitch from the focal-plane resolution', async () => {
    const jpg = await sharp(new Uint8Array(24 * 16 * 3).fill(90), { raw: { width: 24, height: 16, channels: 3 } }).jpeg().toBuffer();
    const ex = exifBlock('Acme', 'Star 1', [
      [0x829d, 5, 28, 10], // FNumber 2.8
      [0x920a, 5, 135, 1], // FocalLength 135 mm
      [0xa002, 4, 24], // PixelXDimension = image width
      [0xa20e, 5, 2540000, 376], // FocalPlaneXResolution: 6755.3 px/inch -> 25400/6755.3 = 3.76 um
      [0xa210, 3, 2], // FocalPlaneResolutionUnit: inch
    ]);
    const f = await decodeRaster(withApp1(jpg, ex));
    expect(f.hints?.from).toBe('exif');
    expect(f.hints?.focalLengthMm).toBe(135);
    expect(f.hints?.fNumber).toBeCloseTo(2.8, 12);
    expect(f.hints?.pixelSizeUm).toBeCloseTo(3.76, 12);
    expect(f.hints?.camera).toBe('Acme Star 1');
    expect(f.meta.camera).toBe('Acme Star 1');
  });

  it('pixel pitch is not trusted when PixelXDimension differs from the image (resized image)', async () => {
    const jpg = await sharp(new Uint8Array(24 * 16 * 3).fill(90), { raw: { width: 24, height: 16, channels: 3 } }).jpeg().toBuffer();
    const ex = exifBlock('Acme', 'Star 1', [[0x920a, 5, 50, 1], [0xa002, 4, 6000], [0xa20e, 5, 2540000, 376]]);
    const f = await decodeRaster(withApp1(jpg, ex));
    expect(f.hints?.focalLengthMm).toBe(50);
    expect(f.hints?.pixelSizeUm).toBeUndefined();
  });

  it('EXIF written by libexif through sharp (little-endian) is read too', async () => {
    const jpg = await sharp(new Uint8Array(8 * 8 * 3).fill(10), { raw: { width: 8, height: 8, channels: 3 } })
      .withExif({ IFD0: { Make: 'Maker', Model: 'M2' }, IFD2: { FocalLength: '1350/10', FNumber: '40/10' } }).jpeg().toBuffer();
    const meta = await sharp(jpg).metadata();
    const info = parseExif(meta.exif!);
    expect(info?.make).toBe('Maker');
    expect(info?.focalLengthMm).toBe(135);
    expect(info?.fNumber).toBe(4);
    const f = await decodeRaster(jpg);
    expect(f.hints).toMatchObject({ from: 'exif', focalLengthMm: 135, fNumber: 4, camera: 'Maker M2' });
  });

  it('malformed EXIF gives null, not a throw', () => {
    expect(parseExif(new Uint8Array([0x45, 0x78, 0x69, 0x66, 0, 0, 0x4d, 0x4d, 0, 42, 0xff, 0xff, 0xff, 0xff]))).toBeNull();
    expect(parseExif(new Uint8Array(3))).toBeNull();
  });
});

/** PNG with a signature, an IHDR chunk (RFC 2083 §4.1.1), a tiny zlib IDAT and IEND. */
function pngHeaderOnly(w: number, h: number): Uint8Array {
  const chunk = (type: string, data: number[]): number[] => {
    const td = new Uint8Array([...Array.from(type, (c) => c.charCodeAt(0)), ...data]);
    const crc = crc32(td);
    const be32 = (v: number): number[] => [(v >>> 24) & 255, (v >>> 16) & 255, (v >>> 8) & 255, v & 255];
    return [...be32(data.length), ...td, ...be32(crc)];
  };
  const be32 = (v: number): number[] => [(v >>> 24) & 255, (v >>> 16) & 255, (v >>> 8) & 255, v & 255];
  return new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a,
    ...chunk('IHDR', [...be32(w), ...be32(h), 8, 0, 0, 0, 0]), ...chunk('IDAT', [...deflateSync(new Uint8Array(16))]), ...chunk('IEND', [])]);
}

describe('refusals: one line naming the problem', () => {
  it('truncated PNG, JPEG and TIFF', async () => {
    const src = pseudoRandom16(N, 9);
    const png = await encode(src, 1, 'png');
    const tif = await encode(src, 1, 'tiff');
    const jpg = await sharp(new Uint8Array(64 * 64 * 3).map((_, i) => i % 251), { raw: { width: 64, height: 64, channels: 3 } }).jpeg().toBuffer();
    for (const [bytes, re] of [[png.subarray(0, png.length - 30), /unreadable PNG image/], [jpg.subarray(0, jpg.length / 2), /unreadable JPEG image/], [tif.subarray(0, 60), /unreadable TIFF image/]] as const) {
      const e = await refusal(bytes);
      expect(e.kind).toBe('unreadable');
      expect(e.message).toMatch(re);
      expect(e.message).not.toContain('\n');
    }
  });

  it('pixel limit is checked from the header, before decoding', async () => {
    const e = await refusal(pngHeaderOnly(20000, 20000));
    expect(e.message).toBe('image too large: 20000 x 20000 pixels exceeds the limit of 268435456 pixels');
  });

  it('CMYK JPEG, garbage behind a PNG signature, empty input, not an image', async () => {
    const cmyk = await sharp(new Uint8Array(8 * 8 * 3).fill(100), { raw: { width: 8, height: 8, channels: 3 } }).toColourspace('cmyk').jpeg().toBuffer();
    expect((await refusal(cmyk)).message).toMatch(/colour space "cmyk"/);
    expect((await refusal(new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 1, 2, 3, 4, 5]))).message).toMatch(/unreadable PNG image/);
    expect((await refusal(new Uint8Array(0))).message).toBe('empty file');
    expect((await refusal(new Uint8Array([1, 2, 3, 4]))).message).toMatch(/not a TIFF, PNG or JPEG/);
  });
});
