// readFrame / decodeFrame: dispatch by magic bytes (FITS "SIMPLE  =" per FITS 4.0 §4.4.1.1,
// PNG signature per RFC 2083, TIFF "II*\0"/"MM\0*" per TIFF 6.0, JPEG SOI FFD8, gzip 1F8B per
// RFC 1952) and refusals of files that are missing, not regular, empty or too large.
import { createHash } from 'node:crypto';
import { mkdirSync, readFileSync, rmSync, statSync, truncateSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { gzipSync } from 'node:zlib';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { SkyloupeError } from '../../core/errors.ts';
import { decodeFrame, readFrame } from '../../core/frame/read.ts';

const dir = path.join(fileURLToPath(new URL('../../', import.meta.url)), 'test-output', `frame-read-${process.pid}`);

/** One-block FITS primary HDU, 2 x 1 pixels of BITPIX 8, written card by card (§4.1). */
function tinyFits(): Uint8Array {
  const cards = ['SIMPLE  =                    T', 'BITPIX  =                    8', 'NAXIS   =                    2',
    'NAXIS1  =                    2', 'NAXIS2  =                    1', 'END'].map((c) => c.padEnd(80)).join('');
  const b = new Uint8Array(5760).fill(0x20, 0, 2880);
  for (let i = 0; i < cards.length; i++) b[i] = cards.charCodeAt(i);
  b.fill(0, 2880);
  b[2880] = 7; b[2881] = 9;
  return b;
}

async function refusal(p: Promise<unknown>): Promise<SkyloupeError> {
  try { await p; } catch (e) { if (e instanceof SkyloupeError) return e; throw e; }
  throw new Error('expected a SkyloupeError');
}

beforeAll(() => { rmSync(dir, { recursive: true, force: true }); mkdirSync(dir, { recursive: true }); });
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('decodeFrame dispatch', () => {
  it('FITS, PNG, TIFF and JPEG by their magic bytes, whatever the name', async () => {
    expect(Array.from((await decodeFrame(tinyFits(), 'x.png')).data)).toEqual([7, 9]);
    const raw = { raw: { width: 2, height: 1, channels: 1 as const } };
    const px = new Uint8Array([40, 80]);
    expect((await decodeFrame(await sharp(px, raw).toColourspace('b-w').png().toBuffer(), 'a.fits')).format).toBe('png');
    expect((await decodeFrame(await sharp(px, raw).toColourspace('b-w').tiff().toBuffer(), 'a')).format).toBe('tiff');
    expect((await decodeFrame(await sharp(px, raw).toColourspace('b-w').jpeg().toBuffer(), 'a')).format).toBe('jpeg');
  });

  it('messages start with the file name and stay on one line', async () => {
    const e = await refusal(decodeFrame(new Uint8Array([1, 2, 3, 4, 5]), 'odd.bin'));
    expect(e.message).toBe('odd.bin: unrecognised file format (expected FITS, TIFF, PNG, JPEG or a camera raw)');
    expect(e.kind).toBe('unreadable');
  });

  it('gzip is read through; XISF and camera raw files are refused by name', async () => {
    // RFC 1952 stream from node:zlib around the same bytes: the frame inside is decoded.
    expect(Array.from((await decodeFrame(gzipSync(tinyFits()), 'f.fits.gz')).data)).toEqual(Array.from((await decodeFrame(tinyFits(), 'f.fits')).data));
    expect((await refusal(decodeFrame(new TextEncoder().encode('XISF0100....'), 'f.xisf'))).message).toMatch(/XISF/);
    // a TIFF-structured camera raw would otherwise be read as its small embedded preview
    const tif = await sharp(new Uint8Array(4), { raw: { width: 2, height: 2, channels: 1 } }).toColourspace('b-w').tiff().toBuffer();
    expect((await refusal(decodeFrame(tif, 'IMG_0001.NEF'))).message).toMatch(/IMG_0001\.NEF: camera raw file could not be decoded/);
    expect((await refusal(decodeFrame(new Uint8Array(0), 'e.fits'))).message).toBe('e.fits: empty file');
  });
});

describe('readFrame', () => {
  it('reads a file without changing it', async () => {
    const p = path.join(dir, 'frame.fits');
    writeFileSync(p, tinyFits());
    const before = statSync(p);
    const hash = createHash('sha256').update(readFileSync(p)).digest('hex');
    const f = await readFrame(p);
    expect(Array.from(f.data)).toEqual([7, 9]);
    const after = statSync(p);
    expect(after.mtimeMs).toBe(before.mtimeMs);
    expect(createHash('sha256').update(readFileSync(p)).digest('hex')).toBe(hash);
  });

  it('missing file, directory, empty file', async () => {
    expect((await refusal(readFrame(path.join(dir, 'nope.fits')))).message).toMatch(/nope\.fits: file not found$/);
    expect((await refusal(readFrame(dir))).message).toMatch(/is a directory/);
    const empty = path.join(dir, 'empty.fits');
    writeFileSync(empty, '');
    expect((await refusal(readFrame(empty))).message).toMatch(/empty\.fits: empty file$/);
  });

  it('size limit, checked from the file size before reading (sparse 2 GiB file)', async () => {
    const big = path.join(dir, 'big.fits');
    writeFileSync(big, '');
    truncateSync(big, 2 ** 31); // sparse: no disk space used
    const e = await refusal(readFrame(big));
    expect(e.message).toMatch(/file too large \(2147483648 bytes, limit 2147483647\)/);
    rmSync(big);
  });
});
