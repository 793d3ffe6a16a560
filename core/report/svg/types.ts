/** Plain inputs of the drawing functions besides the report (pictures made by the app's worker). */

export interface ImageRef {
  /** A data: URL, so figures stay self-contained (page, PNG export, HTML report). */
  href: string;
  width: number;
  height: number;
}

/** The stretched frame in displayed orientation; `factor` frame px per image px. */
export interface Preview extends ImageRef {
  factor: number;
}

/** Compare and sweep, as the views draw them (the app builds these from core/series). */
export type Better = 'A' | 'B' | 'tie';

/** One frame's numbers in one zone. */
export interface CompareCell {
  stars: number;
  /** Median FWHM in the result's unit, with its 1-sigma error. */
  fwhm: number | null;
  fwhmErr: number | null;
  /** Shared ellipticity: 1 - b/a of each cell's mean distortion vector, averaged over the zone's cells (core/report/words.ts). */
  e: number | null;
}

export interface CompareZoneRow {
  zone: 'center' | 'edges' | 'corners';
  a: CompareCell;
  b: CompareCell;
  better: Better;
  /** (B - A) / A, percent: positive = B larger (A sharper). */
  differencePct: number | null;
  differenceErrPct: number | null;
  significance: number;
  note: string | null;
}

export interface CompareResult {
  a: { id: string; name: string };
  b: { id: string; name: string };
  /** 'arcsec' when both frames have a plate scale (fair across focal lengths), else 'px'. */
  unit: 'arcsec' | 'px';
  zones: CompareZoneRow[];
  notes: string[];
  /** The series module's own output, as it gave it. */
  series: unknown;
}

export interface SweepPointRow {
  id: string;
  name: string;
  spacingMm: number;
  metric: number | null;
  metricErr: number | null;
}

export interface SweepResult {
  metric: string;
  unit: string;
  points: SweepPointRow[];
  bestSpacingMm: number | null;
  uncertaintyMm: number | null;
  /** How the best value was found: where the metric changes sign, or where it is smallest. */
  evidence: 'zero-crossing' | 'minimum' | 'both' | 'none';
  /** Draw the zero line (the metric is signed). */
  signed: boolean;
  /** Fitted curve sampled for drawing. */
  curve: { spacingMm: number; metric: number }[];
  note: string;
  series: unknown;
}

