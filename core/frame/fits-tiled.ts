/**
 * Tile-compressed FITS images (the ".fz" files of fpack and many capture programs), per the
 * tiled-image convention (Pence, White & Seaman, FITS Standard 4.0 §10): the image lives in a
 * BINTABLE with ZIMAGE = T; each row holds one tile as a variable-length byte array in the heap
 * (COMPRESSED_DATA, 1PB/1QB descriptors, §7.3.5), tiles in raster order of tile position with the
 * first axis fastest; ZBITPIX/ZNAXISn/ZTILEn describe the image; RICE_1, GZIP_1 and GZIP_2
 * (byte-shuffled) are decoded here; floating-point images may be quantized (ZSCALE, ZZERO,
 * ZQUANTIZ, ZDITHER0, §10.2) and are restored exactly as the convention defines.
 * Section numbers from memory; behaviour checked against fpack/funpack (cfitsio) in the tests.
 * Every size (tile count, tile table, heap extents, decompressed lengths) is checked before allocating.
 */
import { unreadable } from '../errors.ts';
import type { FitsCard, FitsKeys } from './fits-card.ts';
import { inflateTile } from './gzip.ts';
import { MAX_FRAME_PIXELS } from './limits.ts';
import { riceDecode } from './rice.ts';

export interface TiledHeader {
  /** Image axes (ZNAXIS1, ZNAXIS2, ...). */
  readonly axes: number[];
  /** ZBITPIX: the stored type of the uncompressed image. */
  readonly bitpix: number;
  /** ZCMPTYPE. */
  readonly compression: string;
}

const BITPIX_OK = [8, 16, 32, 64, -32, -64];
const SUPPORTED = new Set(['RICE_1', 'RICE_ONE', 'GZIP_1', 'GZIP_2', 'NOCOMPRESS']);

function int(keys: FitsKeys, key: string, dflt?: number): number {
  const v = keys.get(key);
  if (v === undefined || v === null) {
    if (dflt !== undefined) return dflt;
    throw unreadable(`malformed tile-compressed FITS: missing ${key}`);
  }
  if (typeof v !== 'number' || !Number.isInteger(v)) throw unreadable(`malformed tile-compressed FITS: ${key} = ${String(v)} is not an integer`);
  return v;
}

function str(keys: FitsKeys, key: string): string | undefined {
  const v = keys.get(key);
  return typeof v === 'string' ? v.trim().toUpperCase() : undefined;
}

/** Reads and checks the image description of a ZIMAGE table; allocates nothing. */
export function tiledImageHeader(keys: FitsKeys): TiledHeader {
  const bitpix = int(keys, 'ZBITPIX');
  if (!BITPIX_OK.includes(bitpix)) throw unreadable(`invalid ZBITPIX = ${bitpix} (must be 8, 16, 32, 64, -32 or -64)`);
  const naxis = int(keys, 'ZNAXIS');
  if (naxis < 1 || naxis > 999) throw unreadable(`invalid ZNAXIS = ${naxis}`);
  const axes: number[] = [];
  for (let k = 1; k <= naxis; k++) {
    const a = int(keys, `ZNAXIS${k}`);
    if (a < 0) throw unreadable(`invalid ZNAXIS${k} = ${a}`);
    axes.push(a);
  }
  const compression = str(keys, 'ZCMPTYPE');
  if (!compression) throw unreadable('malformed tile-compressed FITS: missing ZCMPTYPE');
  if (!SUPPORTED.has(compression)) {
    throw unreadable(`tile compression ${compression} is not supported (RICE_1, GZIP_1 and GZIP_2 are read): decompress the file first, e.g. with funpack`);
  }
  return { axes, bitpix, compression };
}

interface Column { name: string; offset: number; type: string; repeat: number; vla: 'P' | 'Q' | null; elem: string }

const TYPE_BYTES: Record<string, number> = { L: 1, B: 1, A: 1, I: 2, J: 4, K: 8, E: 4, D: 8, C: 8, M: 16 };

/** TFORMn (FITS 4.0 §7.3.1 Table 18): rT, or rPt(max)/rQt(max) for variable-length arrays. */
function columns(keys: FitsKeys, rowBytes: number): Column[] {
  const n = int(keys, 'TFIELDS');
  if (n < 0 || n > 999) throw unreadable(`invalid TFIELDS = ${n}`);
  const cols: Column[] = [];
  let off = 0;
  for (let i = 1; i <= n; i++) {
    const form = str(keys, `TFORM${i}`);
    const m = form ? /^(\d*)([LXBIJKAEDCMPQ])([LXBIJKAEDCM]?)/.exec(form) : null;
    if (!m) throw unreadable(form ? `malformed tile-compressed FITS: TFORM${i} = ${form}` : `malformed tile-compressed FITS: missing TFORM${i}`);
    const repeat = m[1] === '' ? 1 : Number(m[1]);
    const t = m[2];
    let width: number;
    let vla: Column['vla'] = null;
    if (t === 'P' || t === 'Q') {
      vla = t;
      width = repeat * (t === 'P' ? 8 : 16);
      if (!m[3]) throw unreadable(`malformed tile-compressed FITS: TFORM${i} = ${form} has no element type`);
    } else if (t === 'X') width = Math.ceil(repeat / 8);
    else width = repeat * TYPE_BYTES[t];
    cols.push({ name: str(keys, `TTYPE${i}`) ?? '', offset: off, type: t, repeat, vla, elem: vla ? m[3] : t });
    off += width;
  }
  if (off !== rowBytes) throw unreadable(`malformed tile-compressed FITS: columns take ${off} bytes per row, NAXIS1 = ${rowBytes}`);
  return cols;
}

/**
 * 10000 uniform deviates of the convention's dither sequence (Park & Miller 1988 minimal standard
 * generator, seed 1; §10.2.2), held as single-precision floats as cfitsio does (measured: double
 * deviates differ from funpack's output in the last bit of some pixels).
 */
let randTable: Float32Array | null = null;
function ditherTable(): Float32Array {
  if (randTable) return randTable;
  const t = new Float32Array(10000);
  const a = 16807;
  const m = 2147483647;
  let seed = 1;
  for (let i = 0; i < 10000; i++) {
    const temp = a * seed; // < 2^46: exact in float64
    seed = temp - m * Math.floor(temp / m);
    t[i] = seed / m;
  }
  return (randTable = t);
}

/** Integer code of an exact zero under SUBTRACTIVE_DITHER_2 (§10.2); undefined pixels use ZBLANK. */
const ZERO_VALUE = -2147483646;

export interface TiledScaling { bzero: number; bscale: number; blank: number | null }

/**
 * Decodes the whole image of a ZIMAGE table whose data start at `dataOffset` (`dataBytes` = table
 * plus heap) into physical values (BZERO + BSCALE * stored for integer images, NaN for BLANK/ZBLANK),
 * first axis fastest.
 */
export function decodeTiledImage(
  bytes: Uint8Array, keys: FitsKeys, dataOffset: number, dataBytes: number, hdr: TiledHeader, scaling: TiledScaling,
): Float32Array {
  const { axes, bitpix, compression } = hdr;
  const rowBytes = int(keys, 'NAXIS1');
  const nRows = int(keys, 'NAXIS2');
  const pcount = int(keys, 'PCOUNT', 0);
  if (rowBytes < 0 || nRows < 0 || pcount < 0) throw unreadable('malformed tile-compressed FITS: negative table size');
  const tableBytes = rowBytes * nRows;
  const theap = int(keys, 'THEAP', tableBytes);
  if (theap < tableBytes || theap > tableBytes + pcount) throw unreadable(`malformed tile-compressed FITS: THEAP = ${theap} outside the data`);
  if (dataOffset + dataBytes > bytes.length) {
    throw unreadable(`truncated: the compressed table needs ${dataBytes} bytes of data, file has ${Math.max(0, bytes.length - dataOffset)}`);
  }
  const heapStart = dataOffset + theap;
  const heapEnd = dataOffset + tableBytes + pcount;

  const total = axes.reduce((a, b) => a * b, 1);
  if (total > 3 * MAX_FRAME_PIXELS) throw unreadable(`image too large: ${axes.join(' x ')} pixels`);
  // Tiles: ZTILEn, default one row per tile (§10.1.1).
  const tile = axes.map((a, k) => {
    const t = int(keys, `ZTILE${k + 1}`, k === 0 ? a : 1);
    if (t < 1) throw unreadable(`invalid ZTILE${k + 1} = ${t}`);
    return Math.min(t, Math.max(1, a));
  });
  const perAxis = axes.map((a, k) => Math.ceil(a / tile[k]));
  const nTiles = perAxis.reduce((a, b) => a * b, 1);
  if (total === 0) return new Float32Array(0);
  if (nTiles !== nRows) throw unreadable(`malformed tile-compressed FITS: ${nTiles} tiles expected, the table has ${nRows} rows`);
  const tileMax = tile.reduce((a, b) => a * b, 1);
  if (tileMax > MAX_FRAME_PIXELS) throw unreadable(`tile too large: ${tile.join(' x ')} pixels`);

  const cols = columns(keys, rowBytes);
  const col = (name: string) => cols.find((c) => c.name === name);
  const cData = col('COMPRESSED_DATA');
  const cGzip = col('GZIP_COMPRESSED_DATA');
  const cRaw = col('UNCOMPRESSED_DATA');
  const cScale = col('ZSCALE');
  const cZero = col('ZZERO');
  const cBlank = col('ZBLANK');
  for (const c of [cData, cGzip, cRaw]) if (c && !c.vla) throw unreadable(`malformed tile-compressed FITS: ${c.name} is not a variable-length column`);
  if (!cData && !cGzip && !cRaw) throw unreadable('malformed tile-compressed FITS: no COMPRESSED_DATA column');

  // Compression parameters ZNAMEi/ZVALi (§10.4): Rice BLOCKSIZE (default 32) and BYTEPIX (default 4).
  let blockSize = 32;
  let bytePix = 4;
  for (let i = 1; i <= 999; i++) {
    const name = str(keys, `ZNAME${i}`);
    if (name === undefined) break;
    const v = keys.get(`ZVAL${i}`);
    if (name === 'BLOCKSIZE' && typeof v === 'number') blockSize = v;
    if (name === 'BYTEPIX' && typeof v === 'number') bytePix = v;
  }

  const quantize = str(keys, 'ZQUANTIZ');
  const floatImage = bitpix < 0;
  const kScale = keys.get('ZSCALE');
  const kZero = keys.get('ZZERO');
  const kBlank = keys.get('ZBLANK');
  const quantized = floatImage && quantize !== 'NONE' && (cScale !== undefined || typeof kScale === 'number');
  const dither = quantize === 'SUBTRACTIVE_DITHER_1' ? 1 : quantize === 'SUBTRACTIVE_DITHER_2' ? 2 : 0;
  const dither0 = int(keys, 'ZDITHER0', 1);
  if (dither && (dither0 < 1 || dither0 > 10000)) throw unreadable(`invalid ZDITHER0 = ${dither0}`);
  const rand = dither ? ditherTable() : null;

  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.length);
  const { bzero, bscale } = scaling;
  const strides: number[] = [];
  for (let k = 0, s = 1; k < axes.length; k++) { strides.push(s); s *= axes[k]; }

  /** Heap bytes of a descriptor column in row r, bounds-checked. */
  const heapSlice = (c: Column, r: number): Uint8Array | null => {
    const p = dataOffset + r * rowBytes + c.offset;
    let count: number, off: number;
    if (c.vla === 'P') { count = dv.getInt32(p, false); off = dv.getInt32(p + 4, false); }
    else { count = Number(dv.getBigInt64(p, false)); off = Number(dv.getBigInt64(p + 8, false)); }
    if (count === 0) return null;
    const size = count * (c.elem === 'X' ? 1 / 8 : TYPE_BYTES[c.elem] ?? 1);
    if (count < 0 || off < 0 || heapStart + off + size > heapEnd) throw unreadable(`malformed tile-compressed FITS: tile ${r + 1} points outside the heap`);
    return bytes.subarray(heapStart + off, heapStart + off + Math.ceil(size));
  };
  const num = (c: Column | undefined, k: FitsCard['value'] | undefined, r: number): number | null => {
    if (c && !c.vla) {
      const p = dataOffset + r * rowBytes + c.offset;
      switch (c.type) {
        case 'D': return dv.getFloat64(p, false);
        case 'E': return dv.getFloat32(p, false);
        case 'J': return dv.getInt32(p, false);
        case 'K': return Number(dv.getBigInt64(p, false));
        case 'I': return dv.getInt16(p, false);
        default: throw unreadable(`malformed tile-compressed FITS: column ${c.name} has type ${c.type}`);
      }
    }
    return typeof k === 'number' ? k : null;
  };

  const dims = new Array<number>(axes.length);
  const origin = new Array<number>(axes.length);
  /** Sets dims/origin of tile r (first axis fastest) and returns its pixel count. */
  const place = (r: number): number => {
    let rem = r;
    let n = 1;
    for (let k = 0; k < axes.length; k++) {
      const tk = rem % perAxis[k];
      rem = Math.floor(rem / perAxis[k]);
      origin[k] = tk * tile[k];
      dims[k] = Math.min(tile[k], axes[k] - origin[k]);
      n *= dims[k];
    }
    return n;
  };
  // Before allocating: every tile must point inside the heap, and a Rice tile must hold at least
  // its first pixel and one FS code per block, so a damaged header cannot claim a huge image cheaply.
  const isRice = compression === 'RICE_1' || compression === 'RICE_ONE';
  const fsBitsMin = bytePix === 1 ? 3 : bytePix === 2 ? 4 : 5;
  for (let r = 0; r < nTiles; r++) {
    const n = place(r);
    const main = cData ? heapSlice(cData, r) : null;
    if (main) {
      if (isRice && main.length < bytePix + Math.ceil((Math.ceil(n / Math.max(1, blockSize)) * fsBitsMin) / 8) - 1) {
        throw unreadable(`truncated: RICE_1 tile ${r + 1} has ${main.length} bytes, too few for ${n} pixels`);
      }
      if (compression === 'NOCOMPRESS' && main.length < n) throw unreadable(`truncated: tile ${r + 1} is too short`);
      // Deflate expands at most about 1032:1 (RFC 1951 limits; figure from memory), and a pixel takes a byte at least.
      if (!isRice && compression !== 'NOCOMPRESS' && main.length * 1100 < n) throw unreadable(`truncated: ${compression} tile ${r + 1} has ${main.length} bytes, too few for ${n} pixels`);
    } else if (!(cGzip && heapSlice(cGzip, r)) && !(cRaw && heapSlice(cRaw, r))) {
      throw unreadable(`malformed tile-compressed FITS: tile ${r + 1} has no data`);
    }
  }
  const out = new Float32Array(total);
  // Tiles that are whole rows (ZTILE1 = ZNAXIS1, one row each), ZNAXIS <= 3.
  const rowTiles = tile[0] === axes[0] && tile.slice(1).every((t) => t === 1) && axes.length <= 3;
  const ints = new Int32Array(tileMax);
  const vals = new Float64Array(tileMax);

  /** Stored values of a tile as raw big-endian samples (GZIP, uncompressed): element size from the length. */
  const rawValues = (buf: Uint8Array, n: number, isFloat: boolean, shuffled: boolean, what: string): void => {
    const size = buf.length / n;
    if (![1, 2, 4, 8].includes(size) || (isFloat && size < 4)) throw unreadable(`corrupt ${what} tile: ${buf.length} bytes for ${n} pixels`);
    let b = buf;
    if (shuffled && size > 1) {
      // GZIP_2: all first bytes of the tile, then all second bytes, ... (byte shuffling).
      b = new Uint8Array(buf.length);
      for (let j = 0; j < size; j++) for (let i = 0; i < n; i++) b[i * size + j] = buf[j * n + i];
    }
    const v = new DataView(b.buffer, b.byteOffset, b.length);
    if (isFloat) {
      if (size === 4) for (let i = 0; i < n; i++) vals[i] = v.getFloat32(4 * i, false);
      else for (let i = 0; i < n; i++) vals[i] = v.getFloat64(8 * i, false);
    } else if (size === 1) for (let i = 0; i < n; i++) vals[i] = v.getUint8(i);
    else if (size === 2) for (let i = 0; i < n; i++) vals[i] = v.getInt16(2 * i, false);
    else if (size === 4) for (let i = 0; i < n; i++) vals[i] = v.getInt32(4 * i, false);
    else for (let i = 0; i < n; i++) vals[i] = Number(v.getBigInt64(8 * i, false));
  };

  for (let r = 0; r < nTiles; r++) {
    const n = place(r);
    let isQuantizedTile = false;
    const main = cData ? heapSlice(cData, r) : null;
    if (main) {
      isQuantizedTile = quantized;
      if (compression === 'RICE_1' || compression === 'RICE_ONE') {
        if (cData!.elem !== 'B') throw unreadable('malformed tile-compressed FITS: RICE_1 data are not bytes');
        riceDecode(main, n, blockSize, bytePix, ints);
        if (!floatImage && rowTiles) {
          // Fast path (the common fpack layout): integer rows straight into the image.
          const blank = num(cBlank, kBlank, r) ?? scaling.blank;
          const o = origin[1] * strides[1] + (axes.length > 2 ? origin[2] * strides[2] : 0);
          const { bzero, bscale } = scaling;
          if (blank === null) for (let i = 0; i < n; i++) out[o + i] = bzero + bscale * ints[i];
          else for (let i = 0; i < n; i++) { const v = ints[i]; out[o + i] = v === blank ? NaN : bzero + bscale * v; }
          continue;
        }
        for (let i = 0; i < n; i++) vals[i] = ints[i];
      } else if (compression === 'GZIP_1' || compression === 'GZIP_2') {
        const buf = inflateTile(main, n * 8);
        rawValues(buf, n, floatImage && !quantized, compression === 'GZIP_2', compression);
      } else {
        rawValues(main, n, floatImage && !quantized, false, compression);
      }
    } else {
      // Tiles that could not be compressed (or quantized) are stored losslessly in another column (§10.3).
      const gz = cGzip ? heapSlice(cGzip, r) : null;
      const raw = gz ? null : cRaw ? heapSlice(cRaw, r) : null;
      if (gz) rawValues(inflateTile(gz, n * 8), n, floatImage, false, 'GZIP_COMPRESSED_DATA');
      else if (raw) rawValues(raw, n, floatImage, false, 'UNCOMPRESSED_DATA');
      else throw unreadable(`malformed tile-compressed FITS: tile ${r + 1} has no data`);
    }

    // Stored -> physical.
    const blank = num(cBlank, kBlank, r) ?? scaling.blank;
    if (isQuantizedTile) {
      const zs = num(cScale, kScale, r);
      const zz = num(cZero, kZero, r) ?? 0;
      if (zs === null || !Number.isFinite(zs) || !Number.isFinite(zz)) throw unreadable(`malformed tile-compressed FITS: no ZSCALE for tile ${r + 1}`);
      if (rand) {
        // §10.2.2: value = (I - R + 0.5) * ZSCALE + ZZERO with R from the sequence, restarted per tile.
        let iseed = (r + dither0 - 1) % 10000;
        let next = Math.floor(rand[iseed] * 500);
        for (let i = 0; i < n; i++) {
          const I = vals[i];
          if (I === blank) vals[i] = NaN;
          else if (dither === 2 && I === ZERO_VALUE) vals[i] = 0;
          else vals[i] = (I - rand[next] + 0.5) * zs + zz;
          if (++next === 10000) {
            if (++iseed === 10000) iseed = 0;
            next = Math.floor(rand[iseed] * 500);
          }
        }
      } else {
        for (let i = 0; i < n; i++) vals[i] = vals[i] === blank ? NaN : vals[i] * zs + zz;
      }
    } else if (!floatImage) {
      const identity = bzero === 0 && bscale === 1;
      for (let i = 0; i < n; i++) {
        const s = vals[i];
        vals[i] = s === blank ? NaN : identity ? s : bzero + bscale * s;
      }
    } else if (bzero !== 0 || bscale !== 1) {
      for (let i = 0; i < n; i++) vals[i] = bzero + bscale * vals[i];
    }

    // Scatter the tile into the image, one run along the first axis at a time.
    const d0 = dims[0];
    const runs = n / d0;
    for (let q = 0; q < runs; q++) {
      let o = origin[0];
      let qq = q;
      for (let k = 1; k < axes.length; k++) {
        const c = qq % dims[k];
        qq = Math.floor(qq / dims[k]);
        o += (origin[k] + c) * strides[k];
      }
      const src = q * d0;
      for (let i = 0; i < d0; i++) out[o + i] = vals[src + i];
    }
  }
  return out;
}
