import type { Optics } from '../frame/types.ts';
import type { StarFlag } from '../stars/types.ts';
import type { DataRegion } from '../image/data-region.ts';
import type { PixelShape } from '../diagnose/pixel-shape.ts';
import type { AstrometrySection } from '../sky/section-types.ts';
import type { ZonePsfSection } from '../field/zone-psf-types.ts';

export const REPORT_SCHEMA = 'skyloupe.report/1';

export interface ReportStar {
  x: number; y: number; flux: number; snr: number;
  fwhmPx: number; fwhmMajorPx: number; fwhmMinorPx: number;
  ellipticity: number; thetaDeg: number; hfdPx: number;
  coma: { x: number; y: number };
  flags: StarFlag[];
  model: string;
  moffatBeta: number | null;
  e1: number; e2: number;
  err: { x: number; y: number; fwhmPx: number; ellipticity: number; thetaDeg: number; hfdPx: number };
  /** Sky position through the fitted lens model (present when the frame was placed on the sky), ICRS degrees. */
  raDeg?: number | null;
  decDeg?: number | null;
  /** Catalogue number of the matched star ("HIP 91262"), null when not matched. */
  catalogueId?: string | null;
}

export interface ZoneSummary {
  zone: 'center' | 'corners';
  stars: number;
  medianFwhmPx: number | null;
  medianFwhmArcsec: number | null;
  medianHfdPx: number | null;
  /** Modulus of the vector-averaged distortion (e1, e2), optics.md section 1.6: never the mean of |e|. */
  meanShapeE: number | null;
  /** "Typical star ellipticity": the median 1 - b/a of the zone's single clean stars (core/report/words.ts). */
  medianEllipticity: number | null;
  /**
   * "Shared ellipticity": 1 - b/a of the zone's mean distortion vector (the corners: each
   * quadrant on its own, averaged by stars), core/report/shared-ellipticity.ts. Added; meanShapeE
   * (the same average as a distortion, all corners together) is kept for scripts.
   */
  sharedEllipticity: number | null;
}

/** The report, schema skyloupe.report/1 (DESIGN.md). Fields may be added, never renamed. */
export interface Report {
  schema: typeof REPORT_SCHEMA;
  tool: { name: 'skyloupe'; version: string };
  createdAt: string;
  frame: {
    path: string;
    width: number;
    height: number;
    format: string;
    cfa: string | null;
    optics: Optics;
    /** How the frame is displayed: which stored row is shown at the top. */
    display: { topRow: 'first' | 'last'; note: string };
    /** Where the frame holds sky: kind full | circle | mask, the image circle, the sky fraction, vignetting (DESIGN.md, turn 2). */
    dataRegion: DataRegion;
    /** The stretch round stars take from the pixels' shape on the sky (header WCS); null without a WCS. */
    pixelShape: PixelShape | null;
    /**
     * Where the frame clips (DESIGN.md, turn 2): `level` in the frame's units (null when only a
     * per-pixel mask or nothing says), `source`: SATURATE | DATAMAX | DQ | white-level |
     * integer-ceiling | plateau | flat-cores | none; `pixels`: saturated pixels a DQ extension marks.
     */
    saturation?: { level: number | null; source: string; pixels?: number };
  };
  conventions: { coordinates: string; angles: string; fwhm: string };
  sky: { level: number; sigma: number; boxPx: number };
  detection: {
    threshold: number;
    candidates: number;
    measured: number;
    /** Detections outside the data region (no sky there), dropped before measuring. */
    outsideData: number;
    usedForField: number;
    subset: null | { of: number; rule: string };
    flagged: Partial<Record<StarFlag, number>>;
  };
  summary: {
    stars: number;
    medianFwhmPx: number | null;
    medianFwhmArcsec: number | null;
    medianHfdPx: number | null;
    medianEllipticity: number | null;
    center: ZoneSummary;
    corners: ZoneSummary;
  };
  stars: ReportStar[];
  diagnosis?: unknown;
  findings?: { code: string; severity: string; message: string; numbers?: Record<string, unknown> }[];
  field?: unknown;
  /** Plate solution, lens model and distortion (absent when the step was skipped). */
  astrometry?: AstrometrySection;
  /** The field's PSF per 3 x 3 zone: clean stars aligned on their centres and stacked, measured (skyloupe.zonepsf/1). */
  zonePsf?: ZonePsfSection;
  timings: Record<string, number>;
}
