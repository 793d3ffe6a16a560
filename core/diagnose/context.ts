/** What the diagnosis needs to know about the optics, and the unit conversions that follow from it. */
import type { Optics } from '../frame/types.ts';
import type { Analysis } from '../analyze.ts';
import type { DataRegion } from '../image/data-region.ts';
import type { PixelShape } from './pixel-shape.ts';

export interface DiagnoseContext {
  readonly width: number;
  readonly height: number;
  readonly optics: Optics;
  /** Which stored row is displayed at the top (names of sides and corners). Default 'first'. */
  readonly displayTopRow?: 'first' | 'last';
  /** Central obstruction ratio (0 for lenses and refractors). */
  readonly obstruction?: number;
  /** Effective wavelength for diffraction, nm (default 550). */
  readonly wavelengthNm?: number;
  /** Where the frame holds sky (full-resolution px); absent or null: the whole frame. */
  readonly dataRegion?: DataRegion | null;
  /** The uniform stretch the header WCS implies for round stars (unequal pixel scales); null: none known. */
  readonly pixelShape?: PixelShape | null;
}

/** The diagnosis context of an analysed frame: one place, so the CLI, the reports and the desktop program agree. */
export function contextOf(a: Analysis): DiagnoseContext {
  return {
    width: a.frame.width, height: a.frame.height, optics: a.optics, displayTopRow: a.frame.displayTopRow,
    dataRegion: a.frame.dataRegion, pixelShape: a.frame.pixelShape,
  };
}

export interface Units {
  readonly fNumber: number | null;
  readonly pixelSizeUm: number | null;
  readonly obstruction: number;
  readonly wavelengthUm: number;
  /** True when focus shifts can be given in micrometres (f-number and pixel size known). */
  readonly micrometres: boolean;
  /** Why micrometres are not available, in plain words. */
  readonly why: string | null;
  /**
   * sqrt(K) where Delta T = K delta^2 (px^2 per um^2): geometric defocus adds
   * (1 + eps^2) delta^2 / (16 N^2) per axis (optics.md section 4), so T gains twice that, over p^2.
   */
  readonly sqrtK: number | null;
  /** Blur-disk diameter (px) per unit of q = sqrt(K) delta: sqrt(8 / (1 + eps^2)). */
  readonly blurPerQ: number;
}

export function units(ctx: DiagnoseContext): Units {
  const N = ctx.optics.fNumber;
  const p = ctx.optics.pixelSizeUm;
  const eps = ctx.obstruction ?? 0;
  const okN = typeof N === 'number' && Number.isFinite(N) && N > 0;
  const okP = typeof p === 'number' && Number.isFinite(p) && p > 0;
  const missing = [okN ? null : 'the f-number', okP ? null : 'the pixel size'].filter(Boolean);
  const micrometres = okN && okP;
  return {
    fNumber: okN ? N : null,
    pixelSizeUm: okP ? p : null,
    obstruction: eps,
    wavelengthUm: (ctx.wavelengthNm ?? 550) / 1000,
    micrometres,
    why: micrometres ? null : `${missing.join(' and ')} ${missing.length > 1 ? 'are' : 'is'} unknown, so focus errors are given as blur in pixels, not micrometres at the sensor (give them with --f-number / --pixel-size)`,
    sqrtK: micrometres ? Math.sqrt((1 + eps * eps) / 8) / ((N as number) * (p as number)) : null,
    blurPerQ: Math.sqrt(8 / (1 + eps * eps)),
  };
}
