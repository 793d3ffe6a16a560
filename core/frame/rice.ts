/**
 * Rice decompression as used by the FITS tiled-image convention (RICE_1; FITS Standard 4.0
 * §10.4.1, after Rice, Yeh & Miller 1993 and White & Greenfield / Pence et al. 2009, PASP 121, 414):
 * the first pixel is stored raw in `bytePix` big-endian bytes; then, per block of `blockSize`
 * pixels, an FS code of 3/4/5 bits (bytePix 1/2/4) selects: FS+1 = 0 -> all differences zero;
 * FS+1 = max -> each difference stored raw in 8*bytePix bits; else each difference is a unary
 * quotient (zeros ended by a one) and FS low bits. Differences are zig-zag mapped
 * (even d -> d/2, odd d -> -(d+1)/2) and added to the previous pixel with wrap-around in
 * 8*bytePix bits. Parameter values (FS widths and maxima) from the convention's table, from memory,
 * and checked here against files written by fpack (cfitsio).
 */
import { unreadable } from '../errors.ts';

const FS_BITS: Record<number, number> = { 1: 3, 2: 4, 4: 5 };
const FS_MAX: Record<number, number> = { 1: 6, 2: 14, 4: 25 };

/**
 * Decodes `n` pixels from `src` into out[0..n) as the stored integers: unsigned 8-bit for
 * bytePix 1, signed 16-bit for 2, signed 32-bit for 4. Throws a SkyloupeError if the stream ends early.
 */
export function riceDecode(src: Uint8Array, n: number, blockSize: number, bytePix: number, out: Int32Array): void {
  const fsBits = FS_BITS[bytePix];
  if (fsBits === undefined) throw unreadable(`RICE_1 with BYTEPIX = ${bytePix} is not supported (1, 2 or 4)`);
  if (!(blockSize >= 1 && blockSize <= 1 << 16) || !Number.isInteger(blockSize)) throw unreadable(`RICE_1 BLOCKSIZE = ${blockSize} is invalid`);
  if (n > out.length) throw unreadable('RICE_1 tile larger than its buffer');
  const fsMax = FS_MAX[bytePix];
  const bBits = 8 * bytePix;
  const len = src.length;
  if (len < bytePix) throw unreadable('RICE_1 tile is truncated (no first pixel)');
  // Zero padding lets the hot loops read a few bytes past the end; overruns are caught per pixel.
  const b8 = new Uint8Array(len + 8);
  b8.set(src);
  let last = 0;
  for (let i = 0; i < bytePix; i++) last = last * 256 + b8[i];
  // Wrap to the stored type: unsigned 8, signed 16, signed 32.
  const wrap = bytePix === 1 ? (x: number) => x & 0xff : bytePix === 2 ? (x: number) => (x << 16) >> 16 : (x: number) => x | 0;
  last = wrap(last);
  const truncated = () => unreadable('RICE_1 data truncated: compressed tile ends early');

  // Bit buffer as in the reference decoder: `b` holds the `nbits` not yet used bits of the stream
  // (b < 2^nbits, nbits < 8 between codes), `c` is the next byte. Codes are at most 32 bits, so b
  // stays below 2^40 and is exact in a double; shifts are used only while b < 2^32.
  let c = bytePix;
  let b = b8[c++];
  let nbits = 8;
  for (let i = 0; i < n;) {
    nbits -= fsBits;
    while (nbits < 0) { b = b * 256 + b8[c++]; nbits += 8; }
    const fs = (b >>> nbits) - 1;
    b &= (1 << nbits) - 1;
    const iMax = Math.min(n, i + blockSize);
    if (fs < 0) {
      for (; i < iMax; i++) out[i] = last;
    } else if (fs === fsMax) {
      for (; i < iMax; i++) {
        nbits -= bBits;
        while (nbits < 0) { b = b * 256 + b8[c++]; nbits += 8; }
        const p = 2 ** nbits;
        const d = Math.floor(b / p);
        b -= d * p;
        // Zig-zag undo; d < 2^32 so the halving is exact.
        const diff = d % 2 === 0 ? d / 2 : -(d + 1) / 2;
        last = wrap(last + diff);
        out[i] = last;
      }
      if (c > len) throw truncated();
    } else if (fs > fsMax) {
      throw unreadable(`RICE_1 data corrupt: block code ${fs + 1} exceeds ${fsMax + 1}`);
    } else {
      const scale = 2 ** fs;
      for (; i < iMax; i++) {
        // Unary part: zeros up to the terminating one (long runs are valid: outliers in a block).
        while (b === 0) {
          if (c >= len) throw truncated();
          nbits += 8;
          b = b8[c++];
        }
        const nzero = nbits - (32 - Math.clz32(b));
        nbits -= nzero + 1;
        b ^= 1 << nbits;
        nbits -= fs;
        while (nbits < 0) { b = b * 256 + b8[c++]; nbits += 8; }
        const d = nzero * scale + (b >>> nbits);
        b &= (1 << nbits) - 1;
        // (d & 1: the low bit survives ToInt32 for any integer below 2^53)
        const x = last + ((d & 1) === 0 ? d / 2 : -(d + 1) / 2);
        last = bytePix === 2 ? (x << 16) >> 16 : bytePix === 4 ? x | 0 : x & 0xff;
        out[i] = last;
        if (c > len) throw truncated();
      }
    }
    if (c > len) throw truncated();
  }
}
