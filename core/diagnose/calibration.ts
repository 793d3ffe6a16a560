/**
 * How the measured (adaptive, Gaussian-weighted) star moments relate to the geometric
 * aberrations: computed in closed form in field/coma-calibration.ts.
 */
export { adaptiveComaMoments, comaFromMeasured, coreForComa, adaptiveComaSpot } from '../field/coma-calibration.ts';
