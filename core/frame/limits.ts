/** Input limits, checked before any pixel buffer is allocated. */

/** Largest frame accepted (width x height): 2^28 pixels, a 1 GiB Float32Array. */
export const MAX_FRAME_PIXELS = 2 ** 28;

/** Largest file read whole: Node's fs.readFile ceiling (2^31 - 1 bytes). */
export const MAX_FILE_BYTES = 2 ** 31 - 1;
