/**
 * Stop-down advice (optics.md sections 3 and 7): second-moment sizes add, and the terms scale
 * with the f-number N as: seeing and pixel fixed; diffraction ~ N (moment ~ N^2); defocus, tilt,
 * curvature and astigmatism blur ~ 1/N (moment ~ 1/N^2); coma ~ 1/N^2 (moment ~ 1/N^4).
 *   T(N2) = T_fixed + T_diff (N2/N1)^2 + T_defocus (N1/N2)^2 + T_coma (N1/N2)^4
 * The diffraction moment uses the Gaussian-equivalent of the Airy core, sigma = 1.029 lambda N / 2.3548
 * (Airy FWHM 1.029 lambda N, optics.md 1.1). FWHM is predicted by scaling the measured FWHM
 * with the moment size, with the shape factor FWHM / sqrt(T) moving toward the centre's as the
 * optical part shrinks (an approximation: profile FWHM and moment size are not the same measure).
 */
import type { FieldAnalysis } from '../field/map.ts';
import type { ZoneStats } from '../field/types.ts';
import type { Units } from './context.ts';
import { qAt } from './defocus-fit.ts';
import type { DefocusModel } from './tilt.ts';
import type { ComaResult } from './coma.ts';
import { comaLengthAt } from '../field/spin.ts';
import { adaptiveComaMoments, coreForComa } from '../field/coma-calibration.ts';
import type { StopDownDiagnosis, StopPrediction } from './types.ts';

/** Full stops, as marked on lenses (common practice). */
export const FULL_STOPS = [1, 1.4, 2, 2.8, 4, 5.6, 8, 11, 16, 22, 32];
const WORTH = 0.1;

function gaussFwhm(T: number): number {
  return 2.354820045 * Math.sqrt(Math.max(0, T) / 2);
}

interface ZoneTerms {
  z: ZoneStats;
  T: number;
  Terr: number;
  fwhm: number;
  defocus: number;
  coma: number;
}

export function nextStops(N: number, count = 4): number[] {
  return FULL_STOPS.filter((s) => s > N * 1.06).slice(0, count);
}

export function diagnoseStopDown(fa: FieldAnalysis, u: Units, model: DefocusModel | null, coma: ComaResult): StopDownDiagnosis {

  const N1 = u.fNumber;
  const out: StopDownDiagnosis = { available: false, note: null, fNumber: N1, terms: null, predictions: [], worthwhileTo: null, relativeErr: null };
  if (N1 === null) return { ...out, note: 'the f-number is unknown, so the effect of stopping down cannot be predicted (give it with --f-number)' };
  const zones = fa.map.zones.cells;
  const centreZ = zones.find((z) => z.zone === 'center');
  const cornerZs = zones.filter((z) => z.zone === 'corners' && z.n >= 3 && z.sizePx2 !== null && z.fwhmPx !== null);
  if (!centreZ || centreZ.n < 3 || centreZ.sizePx2 === null || centreZ.fwhmPx === null || cornerZs.length === 0) {
    return { ...out, note: 'too few stars in the centre or the corners to predict the effect of stopping down' };
  }
  const g = fa.geom;
  const Td = u.pixelSizeUm ? 2 * ((1.028994 * u.wavelengthUm * N1) / 2.354820045 / u.pixelSizeUm) ** 2 : 0;
  const s1 = fa.map.spin1;
  /** Coma S (px) at a zone from the fitted field, and its core variance. */
  const comaOf = (z: ZoneStats, T: number): { S: number; s2: number } => {
    if (!coma.correction || !s1 || z.meanX === null || z.meanY === null) return { S: 0, s2: T / 2 };
    const c = comaLengthAt(s1, g, z.meanX, z.meanY);
    const S = Math.hypot(c.x, c.y);
    return { S, s2: coreForComa(S, T) };
  };
  /** Adaptive size the coma adds at a zone after stopping down by r = N2/N1 (S ~ 1/N^2). */
  const comaT = (z: ZoneStats, T: number, r = 1) => {
    const { S, s2 } = comaOf(z, T);
    return S > 0 ? adaptiveComaMoments(S / (r * r), s2).T - 2 * s2 : 0;
  };
  const q2 = (z: ZoneStats) => {
    if (!model || z.meanX === null || z.meanY === null) return 0;
    const q = qAt(model.full.params, (z.meanX - fa.centre.x) / g.scale, (z.meanY - fa.centre.y) / g.scale);
    return q * q;
  };
  const Tc = centreZ.sizePx2;
  const comaC = comaT(centreZ, Tc);
  const fixed = Math.max(0.25 * Tc, Tc - Td - q2(centreZ) - comaC);
  const termsOf = (z: ZoneStats): ZoneTerms => {
    const T = z.sizePx2 as number;
    const cm = Math.min(comaT(z, T), Math.max(0, T - fixed - Td));
    return { z, T, Terr: z.sizeErrPx2 ?? 0, fwhm: z.fwhmPx as number, coma: cm, defocus: Math.max(0, T - fixed - Td - cm) };
  };
  const c = termsOf(centreZ);
  const corners = cornerZs.map(termsOf);
  const predictT = (t: ZoneTerms, r: number) => fixed + Td * r * r + t.defocus / (r * r) + (t.coma > 0 ? Math.min(t.coma, comaT(t.z, t.T, r)) : 0);
  const shapeC = c.fwhm / Math.sqrt(c.T);
  const predictFwhm = (t: ZoneTerms, r: number, Tcen: number) => {
    const T = predictT(t, r);
    const shape = t.fwhm / Math.sqrt(t.T);
    const exMeas = t.T - c.T;
    const frac = exMeas > 0 ? Math.min(1, Math.max(0, (T - Tcen) / exMeas)) : 1;
    return (shapeC + (shape - shapeC) * frac) * Math.sqrt(T);
  };
  const mean = (a: number[]) => a.reduce((s, v) => s + v, 0) / a.length;
  const predictions: StopPrediction[] = [];
  for (const N2 of nextStops(N1)) {
    const r = N2 / N1;
    const Tcen = predictT(c, r);
    predictions.push({
      fNumber: N2,
      centreFwhmPx: (c.fwhm / Math.sqrt(c.T)) * Math.sqrt(Tcen),
      cornerFwhmPx: mean(corners.map((t) => predictFwhm(t, r, Tcen))),
      exposureFactor: r * r,
    });
  }
  const nowCorner = mean(corners.map((t) => t.fwhm));
  let worthwhileTo: number | null = N1;
  let prev = nowCorner;
  for (const p of predictions) {
    if ((prev - p.cornerFwhmPx) / prev < WORTH) break;
    worthwhileTo = p.fNumber;
    prev = p.cornerFwhmPx;
  }
  const cornerT = mean(corners.map((t) => t.T));
  const relErr = 0.5 * Math.hypot(mean(corners.map((t) => t.Terr)) / cornerT, (centreZ.sizeErrPx2 ?? 0) / Tc);
  return {
    available: true,
    note: u.pixelSizeUm ? null : 'the pixel size is unknown, so diffraction is left out of the prediction',
    fNumber: N1,
    terms: {
      fixedPx: gaussFwhm(fixed), diffractionPx: gaussFwhm(Td),
      centreDefocusPx: gaussFwhm(c.defocus), cornerDefocusPx: gaussFwhm(mean(corners.map((t) => t.defocus))),
      cornerComaPx: gaussFwhm(mean(corners.map((t) => t.coma))),
    },
    predictions,
    worthwhileTo,
    relativeErr: relErr,
  };
}
