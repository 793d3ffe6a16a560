export { analyzeField, buildFieldMap, estimateCentre, type FieldAnalysis, type FieldContext } from './map.ts';
export { geometry, sideName, type Geometry } from './geometry.ts';
export { starColumns, isUsable, type StarColumns } from './quantities.ts';
export { fitSurface, evalSurface, polyTerms } from './surface.ts';
export type * from './types.ts';
