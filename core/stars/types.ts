/** Why a detection is not used for the field map. An empty list means a clean star. */
export type StarFlag =
  | 'edge'        // stamp touches the frame border or missing pixels
  | 'saturated'   // a pixel at or near the saturation level
  | 'hot-pixel'   // single-pixel spike, narrower than the optics allow
  | 'cosmic-ray'  // sharp multi-pixel hit, narrower than the PSF
  | 'blended'     // another source within the fitting stamp
  | 'fit-failed'  // no converged PSF fit (none is tried for a hot pixel)
  | 'low-snr'     // below the measurement SNR threshold
  | 'streak'      // on a long line: satellite or meteor trail, aircraft lights
  | 'spurious';   // no star of this frame: much narrower or wider than its neighbours, or too diffuse (noise blob, artefact)

/** A detection candidate from the matched filter, in measured-plane pixels. */
export interface Candidate {
  readonly x: number;
  readonly y: number;
  /** Peak of the filtered image in units of the filtered noise. */
  readonly significance: number;
  readonly peak: number;
  readonly flags: readonly StarFlag[];
}

/** Result of a PSF fit, in the measured plane's pixels. */
export interface PsfFit {
  readonly model: 'gaussian' | 'moffat';
  readonly x: number;
  readonly y: number;
  readonly amplitude: number;
  readonly background: number;
  /** FWHM along the major and minor axes, px. For Moffat, 2*alpha*sqrt(2^(1/beta)-1) per axis. */
  readonly fwhmMajorPx: number;
  readonly fwhmMinorPx: number;
  /** Major-axis angle, degrees from +x toward +y, in (-90, 90]. */
  readonly thetaDeg: number;
  readonly beta: number | null;
  readonly flux: number;
  readonly chi2Reduced: number;
  readonly iterations: number;
  readonly converged: boolean;
  /**
   * Pixel-integrated fits: the fitted profile's covariance plus the pixel box's (I/12), px^2, the
   * recorded star's second moments (Gaussian: the covariance; Moffat: its half-maximum Gaussian's).
   */
  readonly recordedCov?: { readonly ixx: number; readonly iyy: number; readonly ixy: number };
  /** 1-sigma errors from the covariance matrix. */
  readonly err: {
    readonly x: number;
    readonly y: number;
    readonly fwhmMajorPx: number;
    readonly fwhmMinorPx: number;
    readonly fwhmPx: number;
    readonly ellipticity: number;
    readonly thetaDeg: number;
    readonly beta: number | null;
  };
}

/** One measured star, as in the report contract (skyloupe.report/1, stars[]). */
export interface Star {
  readonly x: number;
  readonly y: number;
  readonly flux: number;
  readonly snr: number;
  /** Mean FWHM = sqrt(major*minor) of the chosen PSF fit, px, pixel box included (the star as recorded). */
  readonly fwhmPx: number;
  readonly fwhmMajorPx: number;
  readonly fwhmMinorPx: number;
  /** 1 - b/a of the fit. */
  readonly ellipticity: number;
  readonly thetaDeg: number;
  readonly hfdPx: number;
  /** Spin-1 third moment, normalised (dimensionless), pointing toward the flare. */
  readonly coma: { readonly x: number; readonly y: number };
  readonly flags: readonly StarFlag[];
  /** Which fit the size and shape come from. */
  readonly model: 'gaussian' | 'moffat' | 'moments';
  readonly moffatBeta: number | null;
  /** Adaptive second moments (px^2) and their spin-2 distortion components. */
  readonly moments: { readonly ixx: number; readonly iyy: number; readonly ixy: number; readonly e1: number; readonly e2: number };
  readonly err: {
    readonly x: number;
    readonly y: number;
    readonly fwhmPx: number;
    readonly ellipticity: number;
    readonly thetaDeg: number;
    readonly hfdPx: number;
    readonly e1: number;
    readonly e2: number;
  };
}
