/**
 * The focuser position a frame's header records, for a focus series whose positions are not typed.
 * FOCUSPOS and FOCPOS are the spellings capture programs write (common practice, from memory);
 * they count the focuser's own steps, so a step size in µm turns them into travel at the sensor.
 */

/** Keywords read, first found wins. */
export const FOCUS_POSITION_KEYS = ['FOCUSPOS', 'FOCPOS'] as const;

export interface HeaderPosition { value: number; keyword: string }

/** From a frame's kept header values (Frame.meta). */
export function headerFocusPosition(meta: Readonly<Record<string, string | number | boolean>>): HeaderPosition | null {
  for (const k of FOCUS_POSITION_KEYS) {
    const v = meta[k];
    const x = typeof v === 'number' ? v : typeof v === 'string' && v.trim() !== '' ? Number(v) : NaN;
    if (Number.isFinite(x)) return { value: x, keyword: k };
  }
  return null;
}

/**
 * From the first header of a FITS file's bytes, so the page can fill in positions before anything
 * is analysed (the full reader, frame/fits.ts, needs Node's zlib; this reads only numeric cards:
 * FITS Standard 4.0 §4.1-4.2, 80-character cards in 2880-byte blocks, "KEYWORD = value / comment",
 * up to the END card). Null for other files or without the keyword.
 */
export function fitsFocusPosition(bytes: Uint8Array): HeaderPosition | null {
  const text = (a: number, b: number) => String.fromCharCode(...bytes.subarray(a, b));
  if (bytes.length < 2880 || text(0, 9) !== 'SIMPLE  =') return null;
  const meta: Record<string, number> = {};
  // 36 cards per block; a header longer than 100 blocks is not one this reader serves
  for (let off = 0; off + 80 <= Math.min(bytes.length, 100 * 2880); off += 80) {
    const card = text(off, off + 80);
    const key = card.slice(0, 8).trim();
    if (key === 'END') break;
    if (card.slice(8, 10) !== '= ' || key in meta) continue;
    const raw = card.slice(10).split('/')[0].trim().replace(/^'(.*)'$/, '$1').trim().replace(/[dD]/, 'E');
    const x = raw === '' ? NaN : Number(raw);
    if (Number.isFinite(x)) meta[key] = x;
  }
  return headerFocusPosition(meta);
}
