/**
 * The field map: plain JSON-serialisable data (numbers, strings, arrays), drawn by the desktop
 * views and read by the diagnosis. Sizes are second-moment sizes T = Ixx + Iyy (px^2) unless a
 * name says FWHM; `...Err` is the 1-sigma uncertainty of the sibling value; null = not measurable.
 */

export interface XY { x: number; y: number }

export interface ZoneStats {
  /** Cell indices (col along x, row along y, storage order) and bounds in px. */
  col: number;
  row: number;
  bounds: { x0: number; y0: number; x1: number; y1: number };
  /** 3x3 grid only: centre, edge or corner zone, and a display name (e.g. "top-left"). */
  zone?: 'center' | 'edges' | 'corners';
  name?: string;
  /** Share of the zone's area that holds sky (data region); below 0.25 the zone is "no data". */
  dataFraction?: number;
  n: number;
  /** Mean star position and normalised field height about the optical centre (corner of the frame = 1 about the frame centre). */
  meanX: number | null;
  meanY: number | null;
  fieldHeight: number | null;
  fwhmPx: number | null;
  fwhmErrPx: number | null;
  hfdPx: number | null;
  hfdErrPx: number | null;
  /** Second-moment size T = Ixx + Iyy (px^2), clipped mean. */
  sizePx2: number | null;
  sizeErrPx2: number | null;
  /** Gaussian-equivalent FWHM from the moments, 2.3548 sqrt(T/2) (not comparable with fwhmPx for non-Gaussian stars). */
  momentFwhmPx: number | null;
  /** Vector-averaged distortion (optics.md 1.6: average components, then take the modulus). */
  e1: number | null;
  e2: number | null;
  eErr: number | null;
  eMag: number | null;
  /** Axis of the mean elongation, degrees in (-90, 90]. */
  thetaDeg: number | null;
  /** Radial and cross (45 deg) parts of e about the optical centre; positive radial = elongated along the radius. */
  eRadial: number | null;
  eCross: number | null;
  /** Signed radial-minus-tangential moment I_rad - I_tan (px^2), optics.md section 5. */
  radMinusTanPx2: number | null;
  radMinusTanErrPx2: number | null;
  coma: XY | null;
  comaErr: number | null;
  /** Radial part of the coma vector about the optical centre; positive = flare outward. */
  comaRadial: number | null;
}

export interface ZoneGrid {
  cols: number;
  rows: number;
  cellWidthPx: number;
  cellHeightPx: number;
  /** Row-major (row * cols + col). */
  cells: ZoneStats[];
}

/** A smooth weighted least-squares polynomial surface v(x, y) = sum coef_k u^i v^j, u = (x - origin.x)/scale, v likewise. */
export interface Surface {
  quantity: string;
  unit: string;
  degree: number;
  origin: XY;
  scalePx: number;
  /** Exponents [i, j] of each term. */
  terms: [number, number][];
  coef: number[];
  coefErr: number[];
  /** Robust rms of the residuals and the intrinsic scatter found beyond the stated errors. */
  residualRms: number;
  scatter: number;
  nStars: number;
  /** Values on a regular grid of sample points for drawing (row-major). */
  samples: { cols: number; rows: number; x: number[]; y: number[]; values: number[] };
}

/** Fit of the spin-2 moment field M = (Ixx - Iyy) + 2i Ixy as A (z - z0)^2 + C (z in units of the half-diagonal). */
export interface Spin2Field {
  /** Coefficient of (z - z0)^2, px^2 at unit field height: real part > 0 radial, < 0 tangential. */
  a: { re: number; im: number };
  aErr: { re: number; im: number };
  /** Significance of A (sqrt of its 2-dof chi^2 against zero). */
  aSignificance: number;
  /** The constant part (uniform elongation over the frame, px^2). */
  c: { re: number; im: number };
  cErr: { re: number; im: number };
  cSignificance: number;
  /** Symmetry centre z0 in px (null when A is not significant), with bootstrap errors. */
  centrePx: XY | null;
  centreErrPx: XY | null;
  /** The symmetry centre when it lies beyond 1.5 half-diagonals (up to 6): not an optical centre, but a field-rotation centre may be there. */
  farCentrePx: XY | null;
  /**
   * Rank-1 test (optics.md section 6): slope of the size excess against |A (z - z0)^2|; 1 for trails
   * (one axis grows), above 1 when both axes grow (defocus, astigmatism off a line focus).
   */
  excessRatio: number | null;
  excessRatioErr: number | null;
  /** Whether the minor-axis width T - |M| is the same across the field (rank-1 everywhere); null when A is not significant. */
  minorAxisFlat: boolean | null;
}

/**
 * Fit of the spin-1 (coma) field. The coma length S (px): the geometric sagittal coma whose
 * Gaussian-weighted (adaptive) moments give the measured spin-1 moment and size, read through
 * the closed form of coma-calibration.ts. It grows linearly with field height:
 * S(z) = alpha (z - z0) + uniform. The centre z0 first from a linear fit of per-star S vectors,
 * then alpha and z0 refined on the measured moments themselves (linear noise), because the
 * per-star inversion is biased toward zero where noise dominates.
 */
export interface Spin1Field {
  /** Coma length per unit field height (half-diagonal), px: real part > 0 = flare outward. */
  alpha: { re: number; im: number };
  alphaErr: { re: number; im: number };
  alphaSignificance: number;
  /** Where the field coma vanishes, px (null when not located). */
  centrePx: XY | null;
  centreErrPx: XY | null;
  /** Constant coma length vector (px) across the frame: collimation or decentring. */
  uniform: XY;
  uniformErr: number;
  uniformSignificance: number;
}

export interface OpticalCentre {
  x: number;
  y: number;
  /** null when the data do not locate it (then it is the frame centre by assumption). */
  errX: number | null;
  errY: number | null;
  source: 'spin2' | 'spin1' | 'spin1+spin2' | 'frame-centre';
  note: string;
}

export interface RadialBin {
  /** Normalised field height range about the optical centre. */
  from: number;
  to: number;
  n: number;
  sizePx2: number | null;
  sizeErrPx2: number | null;
  fwhmPx: number | null;
  eRadial: number | null;
  eCross: number | null;
  eErr: number | null;
  radMinusTanPx2: number | null;
  radMinusTanErrPx2: number | null;
  comaRadial: number | null;
  comaErr: number | null;
}

export interface FieldMap {
  schema: 'skyloupe.field/1';
  width: number;
  height: number;
  /** Stars given, and the clean ones used (flags empty, finite moments). */
  starsGiven: number;
  starsUsed: number;
  conventions: string;
  centre: OpticalCentre;
  zones: ZoneGrid;
  grid: ZoneGrid;
  surfaces: {
    size: Surface | null;
    fwhm: Surface | null;
    e1: Surface | null;
    e2: Surface | null;
    comaX: Surface | null;
    comaY: Surface | null;
  };
  /** e radial/cross sampled from the e1/e2 surfaces on the same grid (about the optical centre). */
  radialTangential: { x: number[]; y: number[]; eRadial: number[]; eCross: number[]; comaRadial: number[] } | null;
  radialProfile: RadialBin[];
  spin2: Spin2Field | null;
  spin1: Spin1Field | null;
}
