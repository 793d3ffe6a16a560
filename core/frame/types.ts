/** Where an optics value came from; `null` when nobody gave it. */
export type OpticsSource = 'header' | 'exif' | 'user' | 'derived' | 'plate-solve' | null;

export interface Optics {
  readonly focalLengthMm: number | null;
  /** Effective pixel pitch of the analysed pixels (binning included), micrometres. */
  readonly pixelSizeUm: number | null;
  readonly fNumber: number | null;
  /** 206.265 * pixelSizeUm / focalLengthMm, or null when either is unknown. */
  readonly plateScaleArcsecPerPx: number | null;
  readonly source: {
    readonly focalLengthMm: OpticsSource;
    readonly pixelSizeUm: OpticsSource;
    readonly fNumber: OpticsSource;
    readonly plateScaleArcsecPerPx: OpticsSource;
    /**
     * Which header card or EXIF tag served each value read from the file ('FOCRATIO',
     * 'FNUMBER', 'FOCALLEN/APTDIA', 'XPIXSZ', 'FNumber', ...); null for a user value or an
     * unknown one. (Optional so that optics built elsewhere, e.g. in tests, need not state it.)
     */
    readonly keywords?: {
      readonly focalLengthMm: string | null;
      readonly pixelSizeUm: string | null;
      readonly fNumber: string | null;
    };
  };
}

/** Optics as a file states them, before user overrides. Any field may be missing. */
export interface OpticsHints {
  focalLengthMm?: number;
  pixelSizeUm?: number;
  fNumber?: number;
  apertureMm?: number;
  /** Binning already applied to the stored pixels (XBINNING). */
  binning?: number;
  /** What the hints were read from. */
  from: 'header' | 'exif';
  /** The header card or EXIF tag each value came from (FOCALLEN, FOCRATIO, FNUMBER, APTDIA, XPIXSZ, ...). */
  keywords?: { focalLengthMm?: string; pixelSizeUm?: string; fNumber?: string; apertureMm?: string };
  camera?: string;
}

/** Colour-filter-array layout of the stored mosaic, e.g. 'RGGB' (top-left 2x2 in storage order). */
export type CfaPattern = 'RGGB' | 'BGGR' | 'GRBG' | 'GBRG';

export type FrameFormat = 'fits' | 'fits-tiled' | 'tiff' | 'png' | 'jpeg' | 'raw';

/**
 * A decoded frame: one plane of linear intensities in storage order
 * (x = column, y = row as stored, pixel centres at integers), NaN for missing pixels.
 */
export interface Frame {
  readonly width: number;
  readonly height: number;
  readonly data: Float32Array;
  readonly format: FrameFormat;
  /**
   * Level at which pixels are clipped: the SATURATE or DATAMAX keyword, the raw white level, or
   * the highest value the encoding can hold (after BZERO/BSCALE); null if unbounded (float data)
   * and nothing says. The data may still show a lower clip (core/frame/saturation.ts).
   */
  readonly saturationLevel: number | null;
  /** What saturationLevel came from (absent: the integer ceiling, or none when the level is null). */
  readonly saturationSource?: 'SATURATE' | 'DATAMAX' | 'white-level' | 'integer-ceiling';
  /** Pixels a data-quality or mask extension marks saturated (1 = saturated), storage order; absent if none. */
  readonly saturatedMask?: Uint8Array | null;
  /** Which extension gave the mask and set unusable pixels to NaN: a DQ or MASK image; absent if none. */
  readonly qualitySource?: 'DQ' | 'mask';
  /** How many pixels the quality extension marked saturated and unusable (set to NaN). */
  readonly qualityCounts?: { readonly saturated: number; readonly unusable: number };
  /** Colour-filter-array layout if the stored pixels are a raw mosaic. */
  readonly cfa: CfaPattern | null;
  /** Which stored row is shown at the top of the display. */
  readonly displayTopRow: 'first' | 'last';
  readonly hints: OpticsHints | null;
  /** Header keywords (FITS) or metadata tags, for the report; values as parsed. */
  readonly meta: Readonly<Record<string, string | number | boolean>>;
}

/**
 * The plane that is measured. For CFA data it is a 2x2-superpixel luminance; `scale`
 * and `offset` map its coordinates back to the full-resolution frame:
 * xFull = scale * x + offset.
 */
export interface MeasurePlane {
  readonly width: number;
  readonly height: number;
  readonly data: Float32Array;
  readonly scale: number;
  readonly offset: number;
  readonly saturationLevel: number | null;
  /** Plane pixels marked saturated by a DQ or mask extension (any of a superpixel's four); null if none. */
  readonly saturatedMask?: Uint8Array | null;
}
