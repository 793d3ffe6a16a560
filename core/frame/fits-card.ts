/**
 * A FITS header card (FITS Standard 4.0 §4.1: keyword, value, comment), shared by the reader
 * (fits.ts), the tile-compressed image decoder (fits-tiled.ts) and the writer (fits-write.ts).
 */
export interface FitsCard { key: string; value: string | number | boolean | null; comment?: string }

/** A header's values by keyword. */
export type FitsKeys = ReadonlyMap<string, FitsCard['value']>;
