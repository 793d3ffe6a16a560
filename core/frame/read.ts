/** Reading a frame file: format by magic bytes, never by name alone; files are only read. */
import { stat, readFile } from 'node:fs/promises';
import path from 'node:path';
import { SkyloupeError, unreadable } from '../errors.ts';
import { decodeFits } from './fits.ts';
import { gunzipFile } from './gzip.ts';
import { MAX_FILE_BYTES } from './limits.ts';
import { decodeRaster, rasterFormatOf } from './raster.ts';
import { decodeRaw, isDng } from './raw.ts';
import type { Frame } from './types.ts';

import { TIFF_BASED_RAW as TIFF_RAW_LIST } from './extensions.ts';

/** Camera raw formats built on TIFF: sharp would quietly read their small preview image instead. */
const TIFF_BASED_RAW = new Set(TIFF_RAW_LIST);

function ascii(b: Uint8Array, at: number, s: string): boolean {
  if (at + s.length > b.length) return false;
  for (let i = 0; i < s.length; i++) if (b[at + i] !== s.charCodeAt(i)) return false;
  return true;
}


async function dispatch(bytes: Uint8Array, name: string, depth = 0): Promise<Frame> {
  if (bytes.length === 0) throw unreadable('empty file');
  if (ascii(bytes, 0, 'SIMPLE  =')) return decodeFits(bytes); // FITS 4.0 §4.4.1.1: first card SIMPLE
  if (bytes[0] === 0x1f && bytes[1] === 0x8b) {
    // Whole-file gzip (RFC 1952 magic 1F 8B), e.g. .fits.gz; the output is bounded like a file read whole.
    if (depth > 0) throw unreadable('gzip inside gzip is not read');
    const inner = await gunzipFile(bytes, MAX_FILE_BYTES);
    return dispatch(inner, name.replace(/\.gz$/i, ''), depth + 1);
  }
  if (ascii(bytes, 0, 'XISF0100')) throw unreadable('XISF files are not supported yet: save as FITS or 16-bit TIFF');
  if (ascii(bytes, 4, 'ftypcrx') || ascii(bytes, 0, 'FUJIFILM') || ascii(bytes, 0, 'IIRO') || ascii(bytes, 0, 'IIRS') || ascii(bytes, 0, 'IIU\0') || ascii(bytes, 0, 'MMOR')) {
    return decodeRaw(bytes);
  }
  const fmt = rasterFormatOf(bytes);
  if (fmt) {
    if (fmt === 'tiff' && (TIFF_BASED_RAW.has(path.extname(name).toLowerCase()) || isDng(bytes))) return decodeRaw(bytes);
    return decodeRaster(bytes);
  }
  throw unreadable('unrecognised file format (expected FITS, TIFF, PNG, JPEG or a camera raw)');
}

/** Decodes a frame held in memory; `name` is used for messages and to spot camera raw files. */
export async function decodeFrame(bytes: Uint8Array, name: string): Promise<Frame> {
  try {
    return await dispatch(bytes, name);
  } catch (err) {
    if (err instanceof SkyloupeError) throw new SkyloupeError(err.kind, `${name}: ${err.message}`);
    throw err;
  }
}

/** Reads and decodes a frame file. Missing, directory, special, empty or oversized files give a SkyloupeError. */
export async function readFrame(file: string): Promise<Frame> {
  let st;
  try {
    st = await stat(file);
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    if (code === 'ENOENT' || code === 'ENOTDIR') throw unreadable(`${file}: file not found`);
    if (code === 'EACCES' || code === 'EPERM') throw unreadable(`${file}: permission denied`);
    throw unreadable(`${file}: cannot read (${code ?? 'error'})`);
  }
  if (st.isDirectory()) throw unreadable(`${file}: is a directory, not a frame file`);
  if (!st.isFile()) throw unreadable(`${file}: not a regular file`);
  if (st.size === 0) throw unreadable(`${file}: empty file`);
  if (st.size > MAX_FILE_BYTES) throw unreadable(`${file}: file too large (${st.size} bytes, limit ${MAX_FILE_BYTES})`);
  let bytes: Buffer;
  try {
    bytes = await readFile(file, { flag: 'r' });
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    throw unreadable(`${file}: cannot read (${code === 'EACCES' ? 'permission denied' : code ?? 'error'})`);
  }
  return decodeFrame(bytes, file);
}
