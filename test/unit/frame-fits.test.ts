// FITS reader and writer against byte sequences built here by hand from the FITS Standard 4.0
// (IAU FITS Working Group 2018): 2880-byte blocks, 80-character cards, big-endian data,
// physical = BZERO + BSCALE * stored, BLANK for undefined integers. IEEE 754 bit patterns for floats.
// §4.4.2.5 checked in the FITS 3.0 text (same numbering in 4.0); other section numbers from memory.
import { describe, expect, it } from 'vitest';
import { SkyloupeError } from '../../core/errors.ts';
import { decodeFits, parseFitsHeader } from '../../core/frame/fits.ts';
import { encodeFits, formatCard } from '../../core/frame/fits-write.ts';

const enc = (s: string): number[] => Array.from(s, (c) => c.charCodeAt(0));

/** A card: keyword in bytes 1-8, "= " in 9-10, fixed-format value right-justified to byte 30 (§4.2). */
function kv(key: string, value: string | number | boolean, comment?: string): string {
  const v = typeof value === 'boolean' ? (value ? 'T' : 'F').padStart(20)
    : typeof value === 'number' ? String(value).padStart(20)
      : `'${value.padEnd(8)}'`;
  const s = key.padEnd(8) + '= ' + v + (comment ? ' / ' + comment : '');
  if (s.length > 80) throw new Error('card too long');
  return s.padEnd(80);
}

/** Header cards + END padded with blanks to whole blocks; data padded with zeros (§3.3). */
function hdu(cards: string[], data: Uint8Array = new Uint8Array(0), padData = true): Uint8Array {
  const text = cards.map((c) => c.padEnd(80)).join('') + 'END'.padEnd(80);
  const hlen = Math.ceil(text.length / 2880) * 2880;
  const dlen = padData ? Math.ceil(data.length / 2880) * 2880 : data.length;
  const out = new Uint8Array(hlen + dlen);
  out.fill(0x20, 0, hlen);
  out.set(enc(text), 0);
  out.set(data, hlen);
  return out;
}

function concat(...parts: Uint8Array[]): Uint8Array {
  const out = new Uint8Array(parts.reduce((a, p) => a + p.length, 0));
  let o = 0;
  for (const p of parts) { out.set(p, o); o += p.length; }
  return out;
}

/** Big-endian samples. */
function be(bitpix: number, values: (number | bigint)[]): Uint8Array {
  const size = Math.abs(bitpix) / 8;
  const dv = new DataView(new ArrayBuffer(values.length * size));
  values.forEach((v, i) => {
    const p = i * size;
    if (bitpix === 8) dv.setUint8(p, Number(v));
    else if (bitpix === 16) dv.setInt16(p, Number(v), false);
    else if (bitpix === 32) dv.setInt32(p, Number(v), false);
    else if (bitpix === 64) dv.setBigInt64(p, BigInt(v), false);
    else if (bitpix === -32) dv.setUint32(p, Number(v), false); // raw IEEE 754 bit pattern
    else dv.setBigUint64(p, BigInt(v), false);
  });
  return new Uint8Array(dv.buffer);
}

function primary(bitpix: number, w: number, h: number, extra: string[] = []): string[] {
  return [kv('SIMPLE', true), kv('BITPIX', bitpix), kv('NAXIS', 2), kv('NAXIS1', w), kv('NAXIS2', h), ...extra];
}

function errorOf(fn: () => unknown): SkyloupeError {
  try { fn(); } catch (e) { if (e instanceof SkyloupeError) return e; throw e; }
  throw new Error('expected a SkyloupeError');
}

describe('FITS data decoding (hand-built per FITS 4.0)', () => {
  it('unsigned 16-bit as BITPIX 16 with BZERO 32768 (§4.4.2.5, Table 4.9 of FITS 3.0)', () => {
    const f = decodeFits(hdu(primary(16, 4, 1, [kv('BZERO', 32768), kv('BSCALE', 1)]), be(16, [-32768, -1, 0, 32767])));
    // physical = 32768 + stored
    expect(Array.from(f.data)).toEqual([0, 32767, 32768, 65535]);
    expect(f.saturationLevel).toBe(65535);
  });

  it('BSCALE/BZERO scaling: physical = BZERO + BSCALE * stored (§4.4.2.5)', () => {
    const f = decodeFits(hdu(primary(16, 3, 1, [kv('BSCALE', 2.5), kv('BZERO', -10)]), be(16, [4, -4, 0])));
    expect(Array.from(f.data)).toEqual([-10 + 2.5 * 4, -10 + 2.5 * -4, -10]);
    expect(f.saturationLevel).toBe(-10 + 2.5 * 32767);
  });

  it('BLANK marks undefined integers, which become NaN (§4.4.2.5)', () => {
    const f = decodeFits(hdu(primary(32, 4, 1, [kv('BLANK', -999)]), be(32, [-999, 7, -2147483648, 2147483647])));
    expect(Number.isNaN(f.data[0])).toBe(true);
    expect(f.data[1]).toBe(7);
    expect(f.data[2]).toBe(-2147483648);
    expect(f.data[3]).toBe(Math.fround(2147483647));
  });

  it('BLANK with BZERO applies to the stored value (the standard\'s example: BLANK = -32768 for physical 0)', () => {
    const f = decodeFits(hdu(primary(16, 2, 1, [kv('BZERO', 32768), kv('BLANK', -32768)]), be(16, [-32768, -32767])));
    expect(Number.isNaN(f.data[0])).toBe(true);
    expect(f.data[1]).toBe(1);
  });

  it('BITPIX 8 is unsigned (§5.2.1)', () => {
    const f = decodeFits(hdu(primary(8, 3, 1), be(8, [0, 128, 255])));
    expect(Array.from(f.data)).toEqual([0, 128, 255]);
    expect(f.saturationLevel).toBe(255);
  });

  it('BITPIX 64 two\'s complement big-endian (§5.2.4)', () => {
    const f = decodeFits(hdu(primary(64, 3, 1), be(64, [0x0000000100000000n, -1n, -1234567890123n])));
    expect(Array.from(f.data)).toEqual([4294967296, -1, Math.fround(-1234567890123)]);
  });

  it('BITPIX -32: IEEE 754 single bit patterns (§5.3), NaN kept, saturation unknown', () => {
    // 0x3FC00000 = 1.5, 0xC0490FDB = -pi (single), 0x7FC00000 = quiet NaN, 0x00000001 = 2^-149
    const f = decodeFits(hdu(primary(-32, 4, 1), be(-32, [0x3fc00000, 0xc0490fdb, 0x7fc00000, 0x00000001])));
    expect(f.data[0]).toBe(1.5);
    expect(f.data[1]).toBe(Math.fround(-Math.PI));
    expect(Number.isNaN(f.data[2])).toBe(true);
    expect(f.data[3]).toBe(2 ** -149);
    expect(f.saturationLevel).toBeNull();
  });

  it('BITPIX -64: IEEE 754 double 0x400921FB54442D18 = pi', () => {
    const f = decodeFits(hdu(primary(-64, 2, 1), be(-64, [0x400921fb54442d18n, 0xbff0000000000000n])));
    expect(f.data[0]).toBe(Math.fround(Math.PI));
    expect(f.data[1]).toBe(-1);
  });

  it('keeps storage order: NAXIS1 varies fastest, y = stored row', () => {
    const f = decodeFits(hdu(primary(16, 3, 2), be(16, [1, 2, 3, 4, 5, 6])));
    expect([f.width, f.height]).toEqual([3, 2]);
    expect(f.data[1 * 3 + 0]).toBe(4); // x = 0, y = 1: first value of the second stored row
  });

  it('accepts a last data block without its zero padding', () => {
    const f = decodeFits(hdu(primary(16, 2, 1), be(16, [9, 8]), false));
    expect(Array.from(f.data)).toEqual([9, 8]);
  });
});

describe('FITS header parsing (§4.1, §4.2)', () => {
  const cards = [
    kv('SIMPLE', true),
    "STR1    = 'O''HARA  '           / doubled quote is one quote",
    "STR2    = 'a / b'              / slash inside a string",
    "STR3    = '  lead  '           / leading blanks kept, trailing dropped",
    "STR4    = ''                   / null string",
    "LOGF    =                    F",
    "INT     =                  -42 / integer",
    "REALD   =              1.5D+03 / D exponent",
    "REALE   =             -2.5E-02",
    "REALP   =                  .25",
    "UNDEF   =                      / no value",
    'HISTORY a history line / not a comment',
    "HIERARCH ESO DET CHIP = 'x1'   / long keyword",
  ];
  const bytes = hdu(cards);
  const { cards: got, dataOffset } = parseFitsHeader(bytes, 0);
  const byKey = new Map(got.map((c) => [c.key, c]));

  it('strings', () => {
    expect(byKey.get('STR1')).toEqual({ key: 'STR1', value: "O'HARA", comment: 'doubled quote is one quote' });
    expect(byKey.get('STR2')?.value).toBe('a / b');
    expect(byKey.get('STR2')?.comment).toBe('slash inside a string');
    expect(byKey.get('STR3')?.value).toBe('  lead');
    expect(byKey.get('STR4')?.value).toBe('');
  });

  it('logical, integer and real values (E and D exponents)', () => {
    expect(byKey.get('SIMPLE')?.value).toBe(true);
    expect(byKey.get('LOGF')?.value).toBe(false);
    expect(byKey.get('INT')).toEqual({ key: 'INT', value: -42, comment: 'integer' });
    expect(byKey.get('REALD')?.value).toBe(1500);
    expect(byKey.get('REALE')?.value).toBe(-0.025);
    expect(byKey.get('REALP')?.value).toBe(0.25);
  });

  it('undefined value, commentary cards, HIERARCH', () => {
    expect(byKey.get('UNDEF')).toEqual({ key: 'UNDEF', value: null, comment: 'no value' });
    expect(byKey.get('HISTORY')).toEqual({ key: 'HISTORY', value: null, comment: 'a history line / not a comment' });
    expect(byKey.get('ESO DET CHIP')?.value).toBe('x1');
  });

  it('data start at the block after END', () => {
    expect(dataOffset).toBe(2880);
    const many = Array.from({ length: 40 }, (_, i) => kv(`K${i}`, i));
    expect(parseFitsHeader(hdu([kv('SIMPLE', true), ...many]), 0).dataOffset).toBe(5760); // 42 cards -> 2 blocks
  });
});

describe('FITS structure', () => {
  it('ROWORDER TOP-DOWN shows the first stored row at the top; default is bottom-up', () => {
    expect(decodeFits(hdu(primary(8, 1, 1, [kv('ROWORDER', 'TOP-DOWN')]), be(8, [1]))).displayTopRow).toBe('first');
    expect(decodeFits(hdu(primary(8, 1, 1, [kv('ROWORDER', 'BOTTOM-UP')]), be(8, [1]))).displayTopRow).toBe('last');
    expect(decodeFits(hdu(primary(8, 1, 1), be(8, [1]))).displayTopRow).toBe('last');
  });

  it('skips a data-less primary and a binary table (with heap, PCOUNT) to reach the IMAGE extension', () => {
    const pri = hdu([kv('SIMPLE', true), kv('BITPIX', 8), kv('NAXIS', 0), kv('EXTEND', true), kv('EXPTIME', 60), kv('INSTRUME', 'CamX')]);
    // BINTABLE data size = NAXIS1 * NAXIS2 + PCOUNT (§7.3.1): 4 * 3 + 7 = 19 bytes
    const tab = hdu([kv('XTENSION', 'BINTABLE'), kv('BITPIX', 8), kv('NAXIS', 2), kv('NAXIS1', 4), kv('NAXIS2', 3),
      kv('PCOUNT', 7), kv('GCOUNT', 1), kv('TFIELDS', 1), kv('TFORM1', '1J')], new Uint8Array(19).fill(0xaa));
    const img = hdu([kv('XTENSION', 'IMAGE'), kv('BITPIX', 16), kv('NAXIS', 2), kv('NAXIS1', 2), kv('NAXIS2', 2),
      kv('PCOUNT', 0), kv('GCOUNT', 1), kv('EXPTIME', 30)], be(16, [1, 2, 3, 4]));
    const f = decodeFits(concat(pri, tab, img));
    expect(Array.from(f.data)).toEqual([1, 2, 3, 4]);
    expect(f.meta.INSTRUME).toBe('CamX'); // inherited from the primary
    expect(f.meta.EXPTIME).toBe(30); // the extension's own value wins
    expect(f.meta.HDU).toBe(2);
  });

  it('a 3-plane cube becomes the mean of its planes; a pixel clipped in one plane stays clipped', () => {
    const cards = [kv('SIMPLE', true), kv('BITPIX', 16), kv('NAXIS', 3), kv('NAXIS1', 2), kv('NAXIS2', 1), kv('NAXIS3', 3), kv('BZERO', 32768)];
    // stored = physical - 32768; planes R, G, B of 2 pixels
    const phys = [10, 100, 20, 65535, 30, 400];
    const f = decodeFits(hdu(cards, be(16, phys.map((v) => v - 32768))));
    expect(f.width * f.height).toBe(2);
    expect(f.data[0]).toBe((10 + 20 + 30) / 3);
    expect(f.data[1]).toBe(65535);
    expect(f.cfa).toBeNull();
  });

  it('BAYERPAT gives the mosaic layout; odd XBAYROFF shifts it by one column [CP]', () => {
    expect(decodeFits(hdu(primary(16, 2, 2, [kv('BAYERPAT', 'RGGB')]), be(16, [1, 2, 3, 4]))).cfa).toBe('RGGB');
    // R G / G B seen from column 1: G R / B G
    expect(decodeFits(hdu(primary(16, 2, 2, [kv('BAYERPAT', 'RGGB'), kv('XBAYROFF', 1)]), be(16, [1, 2, 3, 4]))).cfa).toBe('GRBG');
    expect(decodeFits(hdu(primary(16, 2, 2, [kv('BAYERPAT', 'RGGB'), kv('YBAYROFF', 1)]), be(16, [1, 2, 3, 4]))).cfa).toBe('GBRG');
    expect(decodeFits(hdu(primary(16, 2, 2), be(16, [1, 2, 3, 4]))).cfa).toBeNull();
  });

  it('optics keywords become header hints; XPIXSZ is taken as already binned', () => {
    const f = decodeFits(hdu(primary(16, 1, 1, [kv('FOCALLEN', 400), kv('APTDIA', 80), kv('XPIXSZ', 7.52), kv('XBINNING', 2), kv('INSTRUME', 'CamX')]), be(16, [0])));
    expect(f.hints).toEqual({
      from: 'header', focalLengthMm: 400, apertureMm: 80, pixelSizeUm: 7.52, binning: 2, camera: 'CamX',
      keywords: { focalLengthMm: 'FOCALLEN', apertureMm: 'APTDIA', pixelSizeUm: 'XPIXSZ' },
    });
    expect(decodeFits(hdu(primary(16, 1, 1), be(16, [0]))).hints).toBeNull();
  });
});

describe('FITS refusals: one line naming the problem, nothing allocated for absurd sizes', () => {
  const cases: [string, () => Uint8Array, RegExp][] = [
    ['empty file', () => new Uint8Array(0), /^empty file$/],
    ['not FITS', () => new Uint8Array(enc('hello world, not a FITS file'.padEnd(3000))), /not a FITS file/],
    ['shorter than one block', () => new Uint8Array(enc(kv('SIMPLE', true))), /truncated: .*2880/],
    ['missing END', () => { const b = hdu(primary(8, 1, 1)); b.fill(0x20, 0, 2880); b.set(enc(primary(8, 1, 1).join('')), 0); return b; }, /missing END/],
    ['wrong BITPIX', () => hdu(primary(12, 2, 2)), /invalid BITPIX = 12/],
    ['SIMPLE = F', () => hdu([kv('SIMPLE', false), kv('BITPIX', 8), kv('NAXIS', 2), kv('NAXIS1', 1), kv('NAXIS2', 1)], be(8, [0])), /SIMPLE is not T/],
    ['missing NAXIS2', () => hdu([kv('SIMPLE', true), kv('BITPIX', 8), kv('NAXIS', 2), kv('NAXIS1', 1)]), /missing NAXIS2/],
    ['non-integer NAXIS1', () => hdu(primary(8, 1, 1).map((c) => (c.startsWith('NAXIS1') ? kv('NAXIS1', 'abc') : c))), /NAXIS1 = abc .*not an integer/],
    ['absurd size', () => hdu(primary(16, 100000, 100000)), /too large: 100000 x 100000/],
    ['2^31 pixels', () => hdu(primary(8, 65536, 32768)), /too large/],
    ['data missing', () => hdu(primary(16, 1000, 1000)), /^truncated: header says 2000000 bytes of data, file has 0$/],
    ['data cut short', () => hdu(primary(16, 2000, 2), be(16, [1, 2, 3])).subarray(0, 2880 + 1000), /^truncated: header says 8000 bytes of data, file has 1000$/],
    ['BSCALE = 0', () => hdu(primary(16, 1, 1, [kv('BSCALE', 0)]), be(16, [1])), /BSCALE = 0/],
    ['no image at all', () => hdu([kv('SIMPLE', true), kv('BITPIX', 8), kv('NAXIS', 0)]), /no image/],
    ['1-D data', () => hdu([kv('SIMPLE', true), kv('BITPIX', 8), kv('NAXIS', 1), kv('NAXIS1', 5)], be(8, [1, 2, 3, 4, 5])), /no image/],
    ['4-plane cube', () => hdu([kv('SIMPLE', true), kv('BITPIX', 8), kv('NAXIS', 3), kv('NAXIS1', 1), kv('NAXIS2', 1), kv('NAXIS3', 4)], be(8, [1, 2, 3, 4])), /unsupported FITS image: 1 x 1 x 4/],
  ];
  for (const [name, make, re] of cases) {
    it(name, () => {
      const e = errorOf(() => decodeFits(make()));
      expect(e.kind).toBe('unreadable');
      expect(e.message).toMatch(re);
      expect(e.message).not.toContain('\n');
    });
  }
});

describe('encodeFits (primary HDU writer)', () => {
  it('writes fixed-format cards and whole blocks (§3.1, §4.2)', () => {
    const b = encodeFits({ width: 3, height: 2, data: [0, 1, 2, 3, 4, 5], bitpix: 16 });
    expect(b.length % 2880).toBe(0);
    const text = String.fromCharCode(...b.subarray(0, 400));
    expect(text.slice(0, 30)).toBe('SIMPLE  =                    T'); // T in byte 30
    expect(text.slice(80, 110)).toBe('BITPIX  =                   16');
    expect(text.slice(160, 190)).toBe('NAXIS   =                    2');
  });

  it('bitpix 16 + BZERO 32768 stores value - 32768 big-endian, rounding and clamping', () => {
    const b = encodeFits({ width: 6, height: 1, data: [0, 65535, 1.6, 70000, -5, 32768], bitpix: 16, bzero: 32768 });
    const dv = new DataView(b.buffer, 2880);
    expect([0, 1, 2, 3, 4, 5].map((i) => dv.getInt16(2 * i, false))).toEqual([-32768, 32767, 2 - 32768, 32767, -32768, 0]);
    expect(b.subarray(2880 + 12).every((x) => x === 0)).toBe(true); // zero padding
  });

  it('NaN needs BLANK for integer data', () => {
    const b = encodeFits({ width: 2, height: 1, data: [NaN, 3], bitpix: 32, cards: [{ key: 'BLANK', value: -1 }] });
    expect(new DataView(b.buffer, 2880).getInt32(0, false)).toBe(-1);
    expect(() => encodeFits({ width: 1, height: 1, data: [NaN], bitpix: 16 })).toThrow(/BLANK/);
  });

  it('card text: quotes doubled, comments after " / ", reserved keys refused', () => {
    // the closing quote of a fixed-format string is at byte 20 or later (index 19)
    expect(formatCard({ key: 'OBSERVER', value: "O'Hara", comment: 'me' })).toBe("OBSERVER= 'O''Hara ' / me".padEnd(80));
    expect(formatCard({ key: 'X', value: 'ab' }).indexOf("'", 11)).toBe(19);
    expect(formatCard({ key: 'GAIN', value: 1.5e-7 })).toBe('GAIN    = ' + '1.5E-7'.padStart(20) + ''.padEnd(50));
    expect(() => encodeFits({ width: 1, height: 1, data: [0], bitpix: 8, cards: [{ key: 'NAXIS', value: 3 }] })).toThrow();
  });

  it('round trip through decodeFits for every BITPIX (consistency)', () => {
    const vals = [0, 1, 2, 100, 200, 255];
    for (const bitpix of [8, 16, 32, -32, -64] as const) {
      const f = decodeFits(encodeFits({ width: 3, height: 2, data: vals, bitpix, cards: [{ key: 'ROWORDER', value: 'TOP-DOWN' }] }));
      expect(Array.from(f.data)).toEqual(vals);
      expect(f.displayTopRow).toBe('first');
    }
  });
});
