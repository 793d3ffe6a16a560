import type { Optics } from '../frame/types.ts';
import type { StarFlag } from '../stars/types.ts';
import type { AstrometrySection } from '../sky/section-types.ts';

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
  medianEllipticity: number | null;
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
  };
  conventions: { coordinates: string; angles: string; fwhm: string };
  sky: { level: number; sigma: number; boxPx: number };
  detection: {
    threshold: number;
    candidates: number;
    measured: number;
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
  timings: Record<string, number>;
}
