import type { Report } from './types.ts';

const COLUMNS = [
  'x', 'y', 'flux', 'snr', 'fwhmPx', 'fwhmMajorPx', 'fwhmMinorPx', 'ellipticity', 'thetaDeg', 'hfdPx',
  'comaX', 'comaY', 'e1', 'e2', 'model', 'moffatBeta', 'errX', 'errY', 'errFwhmPx', 'errEllipticity', 'errThetaDeg', 'errHfdPx', 'flags',
  // added with the plate solution (empty when the frame was not placed)
  'raDeg', 'decDeg', 'catalogueId',
] as const;

/** The star table as RFC 4180 CSV (comma separated, CRLF line ends, fields quoted when needed). */
export function starsCsv(report: Report): string {
  const q = (v: unknown) => {
    const s = v === null || v === undefined ? '' : String(v);
    return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
  };
  const lines = [COLUMNS.join(',')];
  for (const s of report.stars) {
    lines.push([
      s.x, s.y, s.flux, s.snr, s.fwhmPx, s.fwhmMajorPx, s.fwhmMinorPx, s.ellipticity, s.thetaDeg, s.hfdPx,
      s.coma.x, s.coma.y, s.e1, s.e2, s.model, s.moffatBeta, s.err.x, s.err.y, s.err.fwhmPx, s.err.ellipticity, s.err.thetaDeg, s.err.hfdPx,
      s.flags.join(' '),
      s.raDeg, s.decDeg, s.catalogueId,
    ].map(q).join(','));
  }
  return lines.join('\r\n') + '\r\n';
}
