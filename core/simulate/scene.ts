/**
 * The simulator's scene: a JSON-serialisable description of one synthetic frame.
 * `parseScene` validates any JSON value and returns a complete Scene with every
 * default filled in, so the truth file can carry exactly what was rendered.
 *
 * Conventions (DESIGN.md): pixel coordinates are 0-based, x = column, y = row in
 * storage order, pixel centres at integers; angles in degrees from +x toward +y.
 * Physical positions on the sensor are in mm from the optical centre, focus
 * errors in µm at the sensor, positive = sensor behind best focus (optics.md §4).
 */
import { SkyloupeError } from '../errors.ts';
import { PROJECTIONS, type Projection } from '../sky/lens.ts';

export const SCENE_SCHEMA = 'skyloupe.scene/1';

/** Largest frame the simulator accepts (pixels), so a typo cannot exhaust memory. */
export const MAX_PIXELS = 100_000_000;
/** Largest side, px. */
export const MAX_SIDE = 20_000;

export interface SceneOptics {
  /** Pixel pitch, µm. Default 3.76. */
  pixelSizeUm: number;
  /** Default 300. */
  focalLengthMm: number;
  /** Working f-ratio N. Default 4. */
  fNumber: number;
  /** Central obstruction, ratio of diameters ε in [0, 0.95). Default 0. */
  obstruction: number;
  /** Binning already applied by the camera (header XBINNING; pixelSizeUm is the binned pitch). Default 1. */
  binning: number;
}

/** One explicit star. Shape fields override the analytic PSF for this star only. */
export interface SceneStar {
  /** Position (Gaussian image point at mid-exposure), storage pixels. */
  x: number;
  y: number;
  /** Total flux in electrons before vignetting. */
  fluxE: number;
  fwhmMajorPx?: number;
  fwhmMinorPx?: number;
  thetaDeg?: number;
  beta?: number;
}

/** Randomly placed stars. */
export interface SceneStarField {
  /** Number of stars. Default 200. */
  count: number;
  /** Flux range in electrons (before vignetting). Defaults 2000 and 200000. */
  fluxMinE: number;
  fluxMaxE: number;
  /**
   * Power-law index s of dN/dF ∝ F^-s between the limits. Default 1.75 (an
   * invented but plausible mix: many faint stars, a few bright ones).
   */
  slope: number;
  /** Smallest distance between two star centres, px (0: none). Default 12. */
  minSeparationPx: number;
  /** Keep star centres this far from the frame border, px. Default 8. */
  marginPx: number;
}

/**
 * The bundled catalogue's stars as a lens pointed at the sky records them (sky-field.ts, through
 * core/sky/lens.ts's model): focal length and pixel size from `optics`, the optical centre (the
 * centre of the distortion) from the optics PSF's `opticalCenterPx` (the frame centre otherwise).
 */
export interface SceneSkyStars {
  /** Sky position of the optical axis, ICRS degrees. */
  pointing: { raDeg: number; decDeg: number };
  /** Direction of celestial north on the frame at the optical axis, degrees from +x toward +y. */
  northDeg: number;
  /** As report.astrometry.parity: 'normal' = the frame as displayed (FITS: last row at the top) shows the sky as seen. Default 'normal'. */
  parity: 'normal' | 'mirrored';
  /** Default 'rectilinear'. */
  projection: Projection;
  /** Radial distortion r_d = r (1 + k1 q^2 + k2 q^4), q = r / (half the frame diagonal). Defaults 0. */
  k1: number;
  k2: number;
  /** Faintest catalogue magnitude drawn. Default 8. */
  magLimit: number;
  /** Electrons of a magnitude-0 star (before vignetting). Default 1e7. */
  fluxMag0E: number;
  /** Largest number of stars, the brightest first; 0 = no limit. Default 0. */
  maxStars: number;
  /** Keep star centres this far inside the frame, px. Default 6. */
  marginPx: number;
}

export type ProfileModel = 'gaussian' | 'moffat';

/** A closed interval [low, high] for per-star uniform variation. */
export type Range = [number, number];

/** Pure elliptical Gaussian / Moffat stars, rendered analytically (no optics model). */
export interface AnalyticPsf {
  kind: 'analytic';
  /** Default 'gaussian'. */
  model: ProfileModel;
  /** FWHM along the major and minor axes, px. Defaults 2.5 and 2.5. */
  fwhmMajorPx: number;
  fwhmMinorPx: number;
  /** Major-axis angle, degrees from +x toward +y. Default 0. */
  thetaDeg: number;
  /** Moffat power index (> 1); ignored for Gaussians. Default 3. */
  beta: number;
  /** Per-star uniform draws that replace the values above; null = no variation. */
  vary: {
    fwhmMajorPx: Range | null;
    /** Minor/major FWHM ratio in (0, 1]; replaces fwhmMinorPx. */
    axisRatio: Range | null;
    thetaDeg: Range | null;
    beta: Range | null;
  };
  /** Gauss-Legendre points per pixel axis for pixel integration; 0 = automatic. Default 0. */
  supersample: number;
  /** Largest fraction of a star's flux left outside its rendered stamp. Default 1e-4. */
  stampFluxTolerance: number;
}

/** Stars through the geometric optics model, rendered by ray (photon) sampling. */
export interface OpticsPsf {
  kind: 'optics';
  seeing: {
    /** Default 'gaussian'. */
    model: ProfileModel;
    /** Seeing FWHM, px. Default 2.5. */
    fwhmPx: number;
    /** Moffat power index (> 1). Default 4.765 (Trujillo et al. 2001: the Kolmogorov match). */
    beta: number;
  };
  aberrations: {
    /** Focus error at the optical centre, µm (positive = sensor behind best focus). Default 0. */
    defocusCenterUm: number;
    /**
     * Sensor tilt as the change of the focus error across the full frame width (right minus
     * left) / height (+y minus y = 0), µm, i.e. t_x = tiltXUmAcross / (width * pixelSizeUm / 1000)
     * µm/mm. Positive = the +x (+y) edge of the sensor lies farther from the lens, so its stars
     * focus with the sensor nearer the lens: the best-focus position changes by minus this (the
     * truth's tilt.acrossFrameUm, in the reports' meaning). Defaults 0.
     */
    tiltXUmAcross: number;
    tiltYUmAcross: number;
    /**
     * Radius of the medial image surface, mm; the focus error grows as
     * h^2 / (2R) (optics.md §3 field curvature). Positive = the surface curves
     * toward the lens, so a flat sensor lies behind focus off axis. null = flat.
     */
    curvatureRadiusMm: number | null;
    /**
     * Astigmatism: S-T focal separation Δz_ast = z_S - z_T = k h^2, in µm/mm^2
     * (h in mm from the optical centre; z along the light). Default 0.
     */
    astigmatismUmPerMm2: number;
    /** Sagittal coma S at the sensor per mm of distance from the coma centre, µm/mm; negative = tail inward. Default 0. */
    comaUmPerMm: number;
    /**
     * Longitudinal spherical aberration, µm: the marginal rays' focus minus the paraxial focus,
     * along the light (negative = under-corrected: marginal rays focus nearer the lens). Focus
     * errors (defocusCenterUm, tilt, curvature) are then measured from the paraxial focus. Default 0.
     */
    sphericalUm: number;
    /** The f-number at which sphericalUm holds (a stopped-down scene scales it by (ref/N)^2); null = the scene's. Default null. */
    sphericalFNumber: number | null;
    /** Where coma vanishes (decentred optics), px; null = the optical centre. */
    comaCenterPx: { x: number; y: number } | null;
    /** Optical axis on the sensor, px; null = frame centre ((w-1)/2, (h-1)/2). */
    opticalCenterPx: { x: number; y: number } | null;
    /**
     * Flattener spacing error, mm (positive = too long). An INVENTED linear
     * model, not any real corrector design: it adds medial curvature
     * SPACING_CURVATURE * s and S-T separation SPACING_ASTIGMATISM * |s| (µm/mm^2),
     * so + and - errors put corner stars on opposite sides of the medial
     * surface and give opposite signs of radial-minus-tangential moment
     * (+ : radial, - : tangential when the centre is at medial focus). Default 0.
     */
    spacingErrorMm: number;
  };
  /** Uniform linear trail, centred on the mid-exposure position. */
  trailing: { lengthPx: number; angleDeg: number };
  /** Field rotation during the exposure about a centre (angle uniform in time, centred). */
  rotation: { centerPx: { x: number; y: number } | null; angleRad: number };
  /** Refuse scenes whose mean photon total exceeds this (time guard). Default 2e9. */
  maxPhotons: number;
}

export type ScenePsf = AnalyticPsf | OpticsPsf;

export interface Scene {
  schema: typeof SCENE_SCHEMA;
  /** Free text (the demo's story, say). Default ''. */
  description: string;
  /** Frame size, px. Defaults 1024 x 768. */
  width: number;
  height: number;
  /** Unsigned 32-bit seed; the same scene and seed give the same frame. Default 1. */
  seed: number;
  /** Exposure time, s (header only; trails and rotation are given directly). Default 60. */
  exposureS: number;
  optics: SceneOptics;
  /** An explicit list, a random field, or the catalogue's stars through a lens (an object with `pointing`). */
  stars: SceneStar[] | SceneStarField | SceneSkyStars;
  psf: ScenePsf;
  /**
   * Sky background in ADU above bias: level at the frame centre, plus the change
   * across the full width / height (linear, centred), plus `quadraticAdu` extra at
   * the farthest corner growing as r^2 from the frame centre. Clamped at 0.
   * Defaults 800, 0, 0, 0.
   */
  sky: { level: number; gradientX: number; gradientY: number; quadraticAdu: number };
  /**
   * Relative illumination 1 - (1 - cornerIllumination) (r / r_corner)^2 about
   * `centerPx` (null = the optical centre, or the frame centre for analytic scenes),
   * r_corner reaching the farthest frame corner; applied to sky and stars. null = none.
   */
  vignetting: { cornerIllumination: number; centerPx: { x: number; y: number } | null } | null;
  noise: {
    /** e- per ADU. Default 1. */
    gain: number;
    /** Default 3. */
    readNoiseE: number;
    /** Default 500. */
    biasAdu: number;
    /**
     * Exact Poisson shot noise (no Gaussian approximation) on sky, dark signal and analytic
     * stars; false keeps their expected values. Photon-sampled stars: false fixes the photon
     * count at round(flux), their positions stay random. Default true.
     */
    shotNoise: boolean;
  };
  /** Pixels with extra dark signal, uniform in [minAdu, maxAdu]. Default 0 of them. */
  hotPixels: { count: number; minAdu: number; maxAdu: number };
  /** Straight cosmic-ray tracks. Default 0 of them. */
  cosmicRays: { count: number; minE: number; maxE: number; maxLengthPx: number };
  /** Round to integer ADU and clip to [0, saturationAdu]. Default true. */
  quantize: boolean;
  /** Default 65535 (16-bit). */
  saturationAdu: number;
}

/** What parseScene accepts: any subset of Scene (nested objects may be partial too). */
export type SceneInput = DeepPartial<Scene>;
type DeepPartial<T> = T extends (infer U)[] ? DeepPartial<U>[] : T extends object ? { [K in keyof T]?: DeepPartial<T[K]> } : T;

/** Invented spacing model coefficients, µm/mm^2 per mm of spacing error (see `spacingErrorMm`). */
export const SPACING_CURVATURE = 0.25;
export const SPACING_ASTIGMATISM = 0.25;

// ---------------------------------------------------------------------------
// Validation

function fail(path: string, what: string): never {
  throw new SkyloupeError('usage', `scene: ${path ? path + ' ' : ''}${what}`);
}

type Obj = Record<string, unknown>;

function isObj(v: unknown): v is Obj {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function obj(v: unknown, path: string, keys: readonly string[]): Obj {
  if (v === undefined || v === null) return {};
  if (!isObj(v)) fail(path, 'must be an object');
  for (const k of Object.keys(v)) {
    if (!keys.includes(k)) fail(path ? `${path}.${k}` : k, `is not a known field (known: ${keys.join(', ')})`);
  }
  return v;
}

interface NumOpts {
  min?: number;
  max?: number;
  /** Strict bounds. */
  gt?: number;
  lt?: number;
  int?: boolean;
}

function num(v: unknown, path: string, def: number, o: NumOpts = {}): number {
  if (v === undefined) return def;
  if (typeof v !== 'number' || !Number.isFinite(v)) fail(path, `must be a finite number (got ${JSON.stringify(v)})`);
  if (o.int && !Number.isInteger(v)) fail(path, `must be an integer (got ${v})`);
  if (o.min !== undefined && v < o.min) fail(path, `must be >= ${o.min} (got ${v})`);
  if (o.max !== undefined && v > o.max) fail(path, `must be <= ${o.max} (got ${v})`);
  if (o.gt !== undefined && !(v > o.gt)) fail(path, `must be > ${o.gt} (got ${v})`);
  if (o.lt !== undefined && !(v < o.lt)) fail(path, `must be < ${o.lt} (got ${v})`);
  return v;
}

function bool(v: unknown, path: string, def: boolean): boolean {
  if (v === undefined) return def;
  if (typeof v !== 'boolean') fail(path, `must be true or false (got ${JSON.stringify(v)})`);
  return v;
}

function str(v: unknown, path: string, def: string): string {
  if (v === undefined) return def;
  if (typeof v !== 'string') fail(path, 'must be a string');
  return v;
}

function oneOf<T extends string>(v: unknown, path: string, def: T, allowed: readonly T[]): T {
  if (v === undefined) return def;
  if (typeof v !== 'string' || !(allowed as readonly string[]).includes(v)) {
    fail(path, `must be one of ${allowed.map((a) => `'${a}'`).join(', ')} (got ${JSON.stringify(v)})`);
  }
  return v as T;
}

function point(v: unknown, path: string): { x: number; y: number } | null {
  if (v === undefined || v === null) return null;
  const o = obj(v, path, ['x', 'y']);
  if (o.x === undefined || o.y === undefined) fail(path, 'needs both x and y');
  return { x: num(o.x, `${path}.x`, 0), y: num(o.y, `${path}.y`, 0) };
}

function range(v: unknown, path: string, o: NumOpts): Range | null {
  if (v === undefined || v === null) return null;
  if (!Array.isArray(v) || v.length !== 2) fail(path, 'must be [low, high]');
  const lo = num(v[0], `${path}[0]`, 0, o);
  const hi = num(v[1], `${path}[1]`, 0, o);
  if (hi < lo) fail(path, `has high < low (${lo}, ${hi})`);
  return [lo, hi];
}

function parseOptics(v: unknown): SceneOptics {
  const o = obj(v, 'optics', ['pixelSizeUm', 'focalLengthMm', 'fNumber', 'obstruction', 'binning']);
  return {
    pixelSizeUm: num(o.pixelSizeUm, 'optics.pixelSizeUm', 3.76, { gt: 0, max: 1000 }),
    focalLengthMm: num(o.focalLengthMm, 'optics.focalLengthMm', 300, { gt: 0, max: 1e6 }),
    fNumber: num(o.fNumber, 'optics.fNumber', 4, { min: 0.5, max: 1000 }),
    obstruction: num(o.obstruction, 'optics.obstruction', 0, { min: 0, lt: 0.95 }),
    binning: num(o.binning, 'optics.binning', 1, { min: 1, max: 16, int: true }),
  };
}

const FWHM = { min: 0.3, max: 500 };

/** Whether a scene's star source is the catalogue through a lens. */
export function isSkyStars(s: Scene['stars']): s is SceneSkyStars {
  return !Array.isArray(s) && 'pointing' in s;
}

function parseSkyStars(v: Obj, width: number, height: number): SceneSkyStars {
  const o = obj(v, 'stars', ['pointing', 'northDeg', 'parity', 'projection', 'k1', 'k2', 'magLimit', 'fluxMag0E', 'maxStars', 'marginPx']);
  const pt = obj(o.pointing, 'stars.pointing', ['raDeg', 'decDeg']);
  if (pt.raDeg === undefined || pt.decDeg === undefined) fail('stars.pointing', 'needs raDeg and decDeg');
  const s: SceneSkyStars = {
    pointing: { raDeg: num(pt.raDeg, 'stars.pointing.raDeg', 0, { min: 0, lt: 360 }), decDeg: num(pt.decDeg, 'stars.pointing.decDeg', 0, { min: -90, max: 90 }) },
    northDeg: num(o.northDeg, 'stars.northDeg', 0, { min: -360, max: 360 }),
    parity: oneOf(o.parity, 'stars.parity', 'normal', ['normal', 'mirrored'] as const),
    projection: oneOf(o.projection, 'stars.projection', 'rectilinear', PROJECTIONS),
    k1: num(o.k1, 'stars.k1', 0, { min: -1, max: 1 }),
    k2: num(o.k2, 'stars.k2', 0, { min: -1, max: 1 }),
    magLimit: num(o.magLimit, 'stars.magLimit', 8, { min: -2, max: 30 }),
    fluxMag0E: num(o.fluxMag0E, 'stars.fluxMag0E', 1e7, { gt: 0, max: 1e14 }),
    maxStars: num(o.maxStars, 'stars.maxStars', 0, { min: 0, max: 1_000_000, int: true }),
    marginPx: num(o.marginPx, 'stars.marginPx', 6, { min: 0 }),
  };
  if (2 * s.marginPx >= Math.min(width, height) - 1) fail('stars.marginPx', `leaves no room in a ${width}x${height} frame`);
  return s;
}

function parseStars(v: unknown, width: number, height: number): SceneStar[] | SceneStarField | SceneSkyStars {
  if (Array.isArray(v)) {
    if (v.length > 1_000_000) fail('stars', `has ${v.length} entries (at most 1000000)`);
    return v.map((s, i) => {
      const p = `stars[${i}]`;
      const o = obj(s, p, ['x', 'y', 'fluxE', 'fwhmMajorPx', 'fwhmMinorPx', 'thetaDeg', 'beta']);
      if (o.x === undefined || o.y === undefined || o.fluxE === undefined) fail(p, 'needs x, y and fluxE');
      const star: SceneStar = {
        x: num(o.x, `${p}.x`, 0, { min: -width, max: 2 * width }),
        y: num(o.y, `${p}.y`, 0, { min: -height, max: 2 * height }),
        fluxE: num(o.fluxE, `${p}.fluxE`, 0, { min: 0, max: 1e12 }),
      };
      if (o.fwhmMajorPx !== undefined) star.fwhmMajorPx = num(o.fwhmMajorPx, `${p}.fwhmMajorPx`, 0, FWHM);
      if (o.fwhmMinorPx !== undefined) star.fwhmMinorPx = num(o.fwhmMinorPx, `${p}.fwhmMinorPx`, 0, FWHM);
      if (o.thetaDeg !== undefined) star.thetaDeg = num(o.thetaDeg, `${p}.thetaDeg`, 0, { min: -360, max: 360 });
      if (o.beta !== undefined) star.beta = num(o.beta, `${p}.beta`, 0, { gt: 1, max: 100 });
      return star;
    });
  }
  if (isObj(v) && v.pointing !== undefined) return parseSkyStars(v, width, height);
  const o = obj(v, 'stars', ['count', 'fluxMinE', 'fluxMaxE', 'slope', 'minSeparationPx', 'marginPx']);
  const f: SceneStarField = {
    count: num(o.count, 'stars.count', 200, { min: 0, max: 1_000_000, int: true }),
    fluxMinE: num(o.fluxMinE, 'stars.fluxMinE', 2000, { gt: 0, max: 1e12 }),
    fluxMaxE: num(o.fluxMaxE, 'stars.fluxMaxE', 200000, { gt: 0, max: 1e12 }),
    slope: num(o.slope, 'stars.slope', 1.75, { min: -5, max: 10 }),
    minSeparationPx: num(o.minSeparationPx, 'stars.minSeparationPx', 12, { min: 0, max: 10000 }),
    marginPx: num(o.marginPx, 'stars.marginPx', 8, { min: 0 }),
  };
  if (f.fluxMaxE < f.fluxMinE) fail('stars', `has fluxMaxE < fluxMinE (${f.fluxMaxE} < ${f.fluxMinE})`);
  if (2 * f.marginPx >= Math.min(width, height) - 1 && f.count > 0) fail('stars.marginPx', `leaves no room in a ${width}x${height} frame`);
  return f;
}

function parsePsf(v: unknown): ScenePsf {
  const kind = isObj(v) ? oneOf(v.kind, 'psf.kind', 'analytic', ['analytic', 'optics'] as const) : 'analytic';
  if (kind === 'analytic') {
    const o = obj(v, 'psf', ['kind', 'model', 'fwhmMajorPx', 'fwhmMinorPx', 'thetaDeg', 'beta', 'vary', 'supersample', 'stampFluxTolerance']);
    const maj = num(o.fwhmMajorPx, 'psf.fwhmMajorPx', 2.5, FWHM);
    const min = num(o.fwhmMinorPx, 'psf.fwhmMinorPx', maj, FWHM);
    if (min > maj) fail('psf', `has fwhmMinorPx > fwhmMajorPx (${min} > ${maj})`);
    const vy = obj(o.vary, 'psf.vary', ['fwhmMajorPx', 'axisRatio', 'thetaDeg', 'beta']);
    return {
      kind,
      model: oneOf(o.model, 'psf.model', 'gaussian', ['gaussian', 'moffat'] as const),
      fwhmMajorPx: maj,
      fwhmMinorPx: min,
      thetaDeg: num(o.thetaDeg, 'psf.thetaDeg', 0, { min: -360, max: 360 }),
      beta: num(o.beta, 'psf.beta', 3, { gt: 1, max: 100 }),
      vary: {
        fwhmMajorPx: range(vy.fwhmMajorPx, 'psf.vary.fwhmMajorPx', FWHM),
        axisRatio: range(vy.axisRatio, 'psf.vary.axisRatio', { gt: 0, max: 1 }),
        thetaDeg: range(vy.thetaDeg, 'psf.vary.thetaDeg', { min: -360, max: 360 }),
        beta: range(vy.beta, 'psf.vary.beta', { gt: 1, max: 100 }),
      },
      supersample: num(o.supersample, 'psf.supersample', 0, { min: 0, max: 32, int: true }),
      stampFluxTolerance: num(o.stampFluxTolerance, 'psf.stampFluxTolerance', 1e-4, { min: 1e-9, max: 0.1 }),
    };
  }
  const o = obj(v, 'psf', ['kind', 'seeing', 'aberrations', 'trailing', 'rotation', 'maxPhotons']);
  const s = obj(o.seeing, 'psf.seeing', ['model', 'fwhmPx', 'beta']);
  const a = obj(o.aberrations, 'psf.aberrations', [
    'defocusCenterUm', 'tiltXUmAcross', 'tiltYUmAcross', 'curvatureRadiusMm', 'astigmatismUmPerMm2',
    'comaUmPerMm', 'comaCenterPx', 'opticalCenterPx', 'spacingErrorMm', 'sphericalUm', 'sphericalFNumber',
  ]);
  const t = obj(o.trailing, 'psf.trailing', ['lengthPx', 'angleDeg']);
  const r = obj(o.rotation, 'psf.rotation', ['centerPx', 'angleRad']);
  let curvatureRadiusMm: number | null = null;
  if (a.curvatureRadiusMm !== undefined && a.curvatureRadiusMm !== null) {
    curvatureRadiusMm = num(a.curvatureRadiusMm, 'psf.aberrations.curvatureRadiusMm', 0);
    if (Math.abs(curvatureRadiusMm) < 1) fail('psf.aberrations.curvatureRadiusMm', `must be at least 1 mm in size, or null for a flat field (got ${curvatureRadiusMm})`);
  }
  const U = 1e5;
  return {
    kind,
    seeing: {
      model: oneOf(s.model, 'psf.seeing.model', 'gaussian', ['gaussian', 'moffat'] as const),
      fwhmPx: num(s.fwhmPx, 'psf.seeing.fwhmPx', 2.5, { min: 0, max: 500 }),
      beta: num(s.beta, 'psf.seeing.beta', 4.765, { gt: 1, max: 100 }),
    },
    aberrations: {
      defocusCenterUm: num(a.defocusCenterUm, 'psf.aberrations.defocusCenterUm', 0, { min: -U, max: U }),
      tiltXUmAcross: num(a.tiltXUmAcross, 'psf.aberrations.tiltXUmAcross', 0, { min: -U, max: U }),
      tiltYUmAcross: num(a.tiltYUmAcross, 'psf.aberrations.tiltYUmAcross', 0, { min: -U, max: U }),
      curvatureRadiusMm,
      astigmatismUmPerMm2: num(a.astigmatismUmPerMm2, 'psf.aberrations.astigmatismUmPerMm2', 0, { min: -1000, max: 1000 }),
      comaUmPerMm: num(a.comaUmPerMm, 'psf.aberrations.comaUmPerMm', 0, { min: -1000, max: 1000 }),
      sphericalUm: num(a.sphericalUm, 'psf.aberrations.sphericalUm', 0, { min: -U, max: U }),
      sphericalFNumber: a.sphericalFNumber === undefined || a.sphericalFNumber === null ? null : num(a.sphericalFNumber, 'psf.aberrations.sphericalFNumber', 0, { min: 0.5, max: 1000 }),
      comaCenterPx: point(a.comaCenterPx, 'psf.aberrations.comaCenterPx'),
      opticalCenterPx: point(a.opticalCenterPx, 'psf.aberrations.opticalCenterPx'),
      spacingErrorMm: num(a.spacingErrorMm, 'psf.aberrations.spacingErrorMm', 0, { min: -100, max: 100 }),
    },
    trailing: {
      lengthPx: num(t.lengthPx, 'psf.trailing.lengthPx', 0, { min: 0, max: 10000 }),
      angleDeg: num(t.angleDeg, 'psf.trailing.angleDeg', 0, { min: -360, max: 360 }),
    },
    rotation: {
      centerPx: point(r.centerPx, 'psf.rotation.centerPx'),
      angleRad: num(r.angleRad, 'psf.rotation.angleRad', 0, { min: -0.5, max: 0.5 }),
    },
    maxPhotons: num(o.maxPhotons, 'psf.maxPhotons', 2e9, { min: 0, max: 1e11 }),
  };
}

/** Validates a scene (a parsed JSON value) and fills in every default. Throws SkyloupeError('usage', 'scene: ...'). */
export function parseScene(json: unknown): Scene {
  if (!isObj(json)) fail('', 'must be a JSON object');
  const o = obj(json, '', [
    'schema', 'description', 'width', 'height', 'seed', 'exposureS', 'optics', 'stars', 'psf', 'sky', 'vignetting',
    'noise', 'hotPixels', 'cosmicRays', 'quantize', 'saturationAdu',
  ]);
  if (o.schema !== undefined && o.schema !== SCENE_SCHEMA) fail('schema', `must be '${SCENE_SCHEMA}' (got ${JSON.stringify(o.schema)})`);
  const width = num(o.width, 'width', 1024, { min: 1, max: MAX_SIDE, int: true });
  const height = num(o.height, 'height', 768, { min: 1, max: MAX_SIDE, int: true });
  if (width * height > MAX_PIXELS) fail('', `frame ${width}x${height} has more than ${MAX_PIXELS} pixels`);

  const sky = obj(o.sky, 'sky', ['level', 'gradientX', 'gradientY', 'quadraticAdu']);
  const nz = obj(o.noise, 'noise', ['gain', 'readNoiseE', 'biasAdu', 'shotNoise']);
  const hot = typeof o.hotPixels === 'number' ? { count: o.hotPixels } : obj(o.hotPixels, 'hotPixels', ['count', 'minAdu', 'maxAdu']);
  const cr = typeof o.cosmicRays === 'number' ? { count: o.cosmicRays } : obj(o.cosmicRays, 'cosmicRays', ['count', 'minE', 'maxE', 'maxLengthPx']);
  const quantize = bool(o.quantize, 'quantize', true);
  const saturationAdu = num(o.saturationAdu, 'saturationAdu', 65535, { gt: 0, max: quantize ? 65535 : 1e30 });

  let vignetting: Scene['vignetting'] = null;
  if (o.vignetting !== undefined && o.vignetting !== null) {
    const vg = obj(o.vignetting, 'vignetting', ['cornerIllumination', 'centerPx']);
    vignetting = {
      cornerIllumination: num(vg.cornerIllumination, 'vignetting.cornerIllumination', 0.7, { gt: 0, max: 1 }),
      centerPx: point(vg.centerPx, 'vignetting.centerPx'),
    };
  }

  const hotPixels = {
    count: num(hot.count, 'hotPixels.count', 0, { min: 0, max: width * height, int: true }),
    minAdu: num(hot.minAdu, 'hotPixels.minAdu', 2000, { min: 0, max: 1e9 }),
    maxAdu: num(hot.maxAdu, 'hotPixels.maxAdu', 30000, { min: 0, max: 1e9 }),
  };
  if (hotPixels.maxAdu < hotPixels.minAdu) fail('hotPixels', 'has maxAdu < minAdu');
  const cosmicRays = {
    count: num(cr.count, 'cosmicRays.count', 0, { min: 0, max: 1_000_000, int: true }),
    minE: num(cr.minE, 'cosmicRays.minE', 2000, { min: 0, max: 1e9 }),
    maxE: num(cr.maxE, 'cosmicRays.maxE', 40000, { min: 0, max: 1e9 }),
    maxLengthPx: num(cr.maxLengthPx, 'cosmicRays.maxLengthPx', 12, { min: 0, max: 10000 }),
  };
  if (cosmicRays.maxE < cosmicRays.minE) fail('cosmicRays', 'has maxE < minE');

  return {
    schema: SCENE_SCHEMA,
    description: str(o.description, 'description', ''),
    width,
    height,
    seed: num(o.seed, 'seed', 1, { min: 0, max: 4294967295, int: true }),
    exposureS: num(o.exposureS, 'exposureS', 60, { min: 0, max: 1e7 }),
    optics: parseOptics(o.optics),
    stars: parseStars(o.stars, width, height),
    psf: parsePsf(o.psf),
    sky: {
      level: num(sky.level, 'sky.level', 800, { min: 0, max: 1e7 }),
      gradientX: num(sky.gradientX, 'sky.gradientX', 0, { min: -1e7, max: 1e7 }),
      gradientY: num(sky.gradientY, 'sky.gradientY', 0, { min: -1e7, max: 1e7 }),
      quadraticAdu: num(sky.quadraticAdu, 'sky.quadraticAdu', 0, { min: -1e7, max: 1e7 }),
    },
    vignetting,
    noise: {
      gain: num(nz.gain, 'noise.gain', 1, { gt: 0, max: 1e4 }),
      readNoiseE: num(nz.readNoiseE, 'noise.readNoiseE', 3, { min: 0, max: 1e5 }),
      biasAdu: num(nz.biasAdu, 'noise.biasAdu', 500, { min: 0, max: 1e7 }),
      shotNoise: bool(nz.shotNoise, 'noise.shotNoise', true),
    },
    hotPixels,
    cosmicRays,
    quantize,
    saturationAdu,
  };
}
