/** The report's zone stacks (skyloupe.zonepsf/1), types only: the page reads them without the engine. */

export interface ZonePsf {
  col: number;
  row: number;
  /** 'top-left' ... 'centre', as the frame is displayed. */
  name: string;
  zone: 'center' | 'edges' | 'corners';
  /** Frame px, the same convention as the field map's zones. */
  bounds: { x0: number; y0: number; x1: number; y1: number };
  /** Clean stars in the zone, and how many of them went into the stack. */
  clean: number;
  stacked: number;
  /** Indices into the report's stars of the stacked stars, highest SNR first. */
  members: number[];
  /** The stack: side x side plane px, row-major in storage order, parts per million of the light in the stack's square. */
  ppm: number[] | null;
  /** Measured on the stack, frame px (the pixel box included, as for every star). */
  fwhmPx: number | null;
  fwhmErrPx: number | null;
  fwhmMajorPx: number | null;
  fwhmMinorPx: number | null;
  hfdPx: number | null;
  hfdErrPx: number | null;
  ellipticity: number | null;
  ellipticityErr: number | null;
  thetaDeg: number | null;
  model: string | null;
  moffatBeta: number | null;
  /** The stack's own SNR (the matched-filter SNR of the measurement). */
  snr: number | null;
}

export interface ZonePsfSection {
  schema: 'skyloupe.zonepsf/1';
  cols: number;
  rows: number;
  /** Side of each stack in plane px, and frame px per plane px (2 for colour-filter mosaics). */
  side: number;
  pixelScale: number;
  method: { resampling: string; combine: string; weights: string; measure: string };
  /** Why the stacks' numbers need care (undersampled stars), or null. */
  note: string | null;
  zones: ZonePsf[];
}
