/**
 * File name endings the frame reader takes (read.ts decides by content; these are for file
 * pickers and messages). Camera raws go through LibRaw (raw.ts).
 */

/** Camera raw formats built on TIFF: sharp would quietly read their small preview image instead. */
export const TIFF_BASED_RAW: readonly string[] = ['.cr2', '.nef', '.nrw', '.arw', '.srf', '.sr2', '.dng', '.pef', '.orf', '.rw2', '.erf', '.3fr', '.iiq', '.mef', '.mos', '.kdc', '.dcr'];

/** Camera raws recognised by their first bytes (CR3, RAF, ORF, RW2). */
const OTHER_RAW = ['.cr3', '.raf'];

export const RAW_EXTENSIONS: readonly string[] = [...TIFF_BASED_RAW, ...OTHER_RAW];

export const IMAGE_EXTENSIONS: readonly string[] = ['.fits', '.fit', '.fts', '.fits.fz', '.fits.gz', '.fit.gz', '.tif', '.tiff', '.png', '.jpg', '.jpeg'];

export const FRAME_EXTENSIONS: readonly string[] = [...IMAGE_EXTENSIONS, ...RAW_EXTENSIONS];

/** In words, for messages. */
export const FRAME_KINDS_WORDS = 'FITS, TIFF, PNG, JPEG and camera raw (CR2, CR3, NEF, ARW, RAF, ORF, RW2, DNG and others)';
