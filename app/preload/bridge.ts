/**
 * The one typed bridge between the page and the engine. In the desktop program it is
 * exposed by preload.ts (contextBridge + ipcRenderer); in browser mode the page builds the
 * same interface over fetch (renderer/http-bridge.ts). Every payload is plain, structured-
 * cloneable data; failures come back as values (an Error's fields do not survive IPC).
 */
import type { Report, ReportStar } from '../../core/report/types.ts';
import type { Preview, CompareResult, SweepResult } from '../../core/report/svg/types.ts';
import type { StampInput } from '../../core/report/svg/stamp.ts';
import type { ThroughFocusResult } from '../../core/series/through-focus.ts';
import type { FocusPairResult } from '../../core/series/focus-pair-types.ts';

export type { FocusPairResult } from '../../core/series/focus-pair-types.ts';

export type { ImageRef, Preview, Better, CompareZoneRow, CompareResult, SweepPointRow, SweepResult } from '../../core/report/svg/types.ts';

export const BRIDGE_VERSION = 1;

export interface FrameFile {
  /** File name only (for messages and the report); never a path to read. */
  name: string;
  bytes: ArrayBuffer;
}

export interface OpticsInput {
  focalLengthMm?: number;
  pixelSizeUm?: number;
  fNumber?: number;
}

export type FailureKind = 'usage' | 'unreadable' | 'no-stars' | 'cancelled' | 'busy' | 'not-found' | 'internal';

export type Outcome<T> = { ok: true; value: T } | { ok: false; kind: FailureKind; message: string };

export interface Progress {
  job: number;
  /** read, background, detect, measure, field, images, done */
  stage: string;
  /** Fraction of the stage, and an overall estimate, 0..1. */
  fraction: number;
  overall: number;
}

export type OpticsField = 'focalLengthMm' | 'pixelSizeUm' | 'fNumber';

export interface AnalysisResult {
  id: string;
  name: string;
  /** Key under which entered optics are remembered (camera name, or the frame size when unnamed). */
  camera: string;
  /** Where the optics came from: the file, the form just now, or the values remembered for this camera. */
  opticsFrom: 'file' | 'entered' | 'remembered' | 'none';
  /** The file names its camera; false: \`camera\` is only the frame size, and remembered optics matched by size alone. */
  cameraNamed: boolean;
  /** Optics fields given by the user: typed into the form for this run, or remembered for the camera. */
  opticsGiven: Partial<Record<OpticsField, 'typed' | 'remembered'>>;
  /** What is remembered for \`camera\` after this run (null: nothing). */
  rememberedOptics: OpticsInput | null;
  opticsMissing: OpticsField[];
  report: Report;
  preview: Preview;
  elapsedMs: number;
}

/** Pixels around one star, storage order, null for missing; `flipY` as the preview: what the stamp figure draws, plus the star's index. */
export interface StampData extends StampInput {
  index: number;
}

export type ExportKind = 'json' | 'csv' | 'html';

/** One frame of a focus series: its file and its focuser position as typed (null: read from its header). */
export interface FocusSeriesFrame {
  name: string;
  bytes: ArrayBuffer;
  /** µm at the sensor (larger = sensor farther from the lens), or focuser steps when stepUnitUm is given; null = the header's. */
  position: number | null;
}

export interface FocusSeriesRequest {
  frames: FocusSeriesFrame[];
  /** The positions are focuser steps of this many µm each; null or absent = they are µm. */
  stepUnitUm?: number | null;
  optics?: OpticsInput;
  /** Wavelength for the critical focus zone, nm (default 550). */
  wavelengthNm?: number;
}

export interface FocusSeriesResult {
  /** skyloupe.throughfocus/1, as `skyloupe through-focus --json` writes it. */
  result: ThroughFocusResult;
  /** Per frame as sent: the position as given (µm or steps) and where it came from (typed, or a header keyword). */
  positions: { name: string; given: number; from: 'typed' | string }[];
  elapsedMs: number;
}

export interface SavedFile {
  /** false when the user dismissed the save dialog. */
  saved: boolean;
  filename: string;
}

export interface AppConfig {
  mode: 'desktop' | 'browser';
  version: string;
  demoAvailable: boolean;
  /** Open the demo frame as soon as the page is ready (npm start). */
  openDemo: boolean;
}

/** Menu commands sent from the desktop program's menu to the page. */
export type MenuCommand =
  | 'open' | 'open-demo' | 'export-json' | 'export-csv' | 'export-html' | 'export-png'
  | 'night' | 'cancel' | 'zoom-in' | 'zoom-out' | 'zoom-reset' | `view:${string}`;

export interface SkyloupeBridge {
  config(): Promise<AppConfig>;
  analyze(file: FrameFile, optics?: OpticsInput): Promise<Outcome<AnalysisResult>>;
  analyzeDemo(optics?: OpticsInput): Promise<Outcome<AnalysisResult>>;
  onProgress(cb: (p: Progress) => void): () => void;
  cancel(): Promise<void>;
  stamp(id: string, starIndex: number): Promise<Outcome<StampData>>;
  compare(idA: string, idB: string): Promise<Outcome<CompareResult>>;
  sweep(points: { id: string; spacingMm: number }[]): Promise<Outcome<SweepResult>>;
  /** A focus series (three or more frames), analysed one after the other in the engine worker; progress as for analyze. */
  throughFocus(req: FocusSeriesRequest): Promise<Outcome<FocusSeriesResult>>;
  /** Two analysed frames a known focus step apart (µm at the sensor, second minus first): the signed tilt. */
  focusPair(firstId: string, secondId: string, stepUm: number): Promise<Outcome<FocusPairResult>>;
  /** Forget the optics remembered for a camera key (AnalysisResult.camera). */
  forgetOptics(camera: string): Promise<Outcome<null>>;
  exportReport(id: string, kind: ExportKind): Promise<Outcome<SavedFile>>;
  savePng(filename: string, bytes: ArrayBuffer): Promise<Outcome<SavedFile>>;
  /** Desktop: the native open dialog (null when dismissed). Browser mode: always null (the page uses a file input). */
  openFileDialog(): Promise<FrameFile | null>;
  onCommand(cb: (cmd: MenuCommand, file?: FrameFile) => void): () => void;
}

/** The IPC channel names (desktop) and HTTP routes (browser mode) share these names. */
export const CHANNELS = {
  config: 'skyloupe:config',
  analyze: 'skyloupe:analyze',
  analyzeDemo: 'skyloupe:analyze-demo',
  progress: 'skyloupe:progress',
  cancel: 'skyloupe:cancel',
  stamp: 'skyloupe:stamp',
  compare: 'skyloupe:compare',
  sweep: 'skyloupe:sweep',
  throughFocus: 'skyloupe:through-focus',
  focusPair: 'skyloupe:focus-pair',
  forgetOptics: 'skyloupe:forget-optics',
  exportReport: 'skyloupe:export',
  savePng: 'skyloupe:save-png',
  openFileDialog: 'skyloupe:open-dialog',
  command: 'skyloupe:command',
} as const;
