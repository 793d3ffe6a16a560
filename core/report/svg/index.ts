/** The figures: pure functions from plain data to SVG (or HTML) strings, no DOM. */
export * from './types.ts';
export * from './theme.ts';
export { esc, num, pm, fieldOf, diagnosisOf, frameMap, elongationFromDistortion, elongationFromEllipticity } from './util.ts';
export { skySvg, markedStars, skyKey, skyKeyEntries, labelledMatches, type SkyKeyEntry } from './sky.ts';
export { scaleBar, roundLength, angleWords } from './scale-bar.ts';
export { shapeSvg, shapeVectors } from './shape.ts';
export { sizeSvg, heatGrid, heatUnavailable, ellipticityFromDistortion, finiteRange, QUANTITY_LABEL, type SizeQuantity } from './size.ts';
export { sensorSideSvg, sensorSideData, sensorSideLayout, planeGradient, type SensorSideData, type SensorSection, type SectionEnd } from './sensor-side.ts';
export { zonePsfSvg, zonePsfOf, zoneWords, displayedStack, PSF_CONTOURS } from './zone-psf.ts';
export { stampSvg } from './stamp.ts';
export { findingsHtml, findingsSvg, summaryHtml, numberLabel } from './panels.ts';
export { compareTableHtml, sweepSvg } from './series.ts';
export { distortionSvg, distortionFigureData, distortedPoint, niceExaggeration, astrometryTableHtml, type DistortionFigureData } from './distortion.ts';
export { focusCurvesSvg, focusSurfaceSvg, stampStripSvg, focusCurvesData, focusSurfaceData, stampStripData, type FocusCurvesData, type SurfaceData, type StampStripData, type CurveCell, type StampFrame, type ThroughFocusLike } from './through-focus.ts';
