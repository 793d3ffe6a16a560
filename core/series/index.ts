export { compareFrames, runCompare, formatCompare, type CompareResult, type ZoneVerdict } from './compare.ts';
export { sweepFrames, runSweep, formatSweep, type SweepResult, type SweepPointInput } from './sweep.ts';
export { focusPair, runFocusPair, formatFocusPair, type FocusPairResult } from './focus-pair.ts';
export { fromAnalysis, type FrameInput, type AnalysisLike } from './input.ts';
export { throughFocus, runThroughFocus, formatThroughFocus, zoneCurveAt, type ThroughFocusResult, type ThroughFocusZone, type FocusFrameInput, type ThroughFocusOptions } from './through-focus.ts';
export { frameExtras, type FrameExtras, type StarStamp } from './frame-extras.ts';
