/** gzip / zlib inflation with an output bound (node:zlib; RFC 1950/1951/1952), so a small file cannot exhaust memory. */
import { gunzip, inflateSync, unzipSync } from 'node:zlib';
import { promisify } from 'node:util';
import { unreadable } from '../errors.ts';

const gunzipAsync = promisify(gunzip);

function oneLine(err: unknown): string {
  const e = err as NodeJS.ErrnoException;
  if (e && (e.code === 'ERR_BUFFER_TOO_LARGE' || e instanceof RangeError)) return 'decompressed data exceed the size limit';
  const m = err instanceof Error ? err.message : String(err);
  return (m.split('\n')[0] || 'unknown error').trim();
}

/** A whole gzip file (RFC 1952, concatenated members allowed), at most `limit` output bytes. */
export async function gunzipFile(bytes: Uint8Array, limit: number): Promise<Uint8Array> {
  try {
    const out = await gunzipAsync(bytes, { maxOutputLength: limit });
    return new Uint8Array(out.buffer, out.byteOffset, out.length);
  } catch (err) {
    throw unreadable(`corrupt gzip data: ${oneLine(err)}`);
  }
}

/**
 * One compressed FITS tile (GZIP_1/GZIP_2 store gzip members; zlib streams are accepted too).
 * Output is bounded by `limit`, the tile's uncompressed size.
 */
export function inflateTile(bytes: Uint8Array, limit: number): Uint8Array {
  try {
    const out = bytes[0] === 0x1f && bytes[1] === 0x8b
      ? unzipSync(bytes, { maxOutputLength: Math.max(1, limit) })
      : inflateSync(bytes, { maxOutputLength: Math.max(1, limit) });
    return new Uint8Array(out.buffer, out.byteOffset, out.length);
  } catch (err) {
    throw unreadable(`corrupt GZIP tile: ${oneLine(err)}`);
  }
}
