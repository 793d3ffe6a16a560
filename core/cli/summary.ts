import type { Report, ZoneSummary } from '../report/types.ts';
import { formatFindings } from '../diagnose/format.ts';
import { saturationText } from '../frame/saturation.ts';
import { skySummaryLines } from '../sky/words.ts';
import { formatQuantity, quantityPhrase } from '../report/words.ts';


function zoneLine(z: ZoneSummary, plate: boolean): string {
  if (z.stars === 0) return 'no stars';
  const arc = plate && z.medianFwhmArcsec !== null ? ` (${formatQuantity('medianFwhmArcsec', z.medianFwhmArcsec)}")` : '';
  return `${z.stars} stars, FWHM ${formatQuantity('medianFwhmPx', z.medianFwhmPx)} px${arc}, HFD ${formatQuantity('medianHfdPx', z.medianHfdPx)} px, ${quantityPhrase('medianEllipticity', z.medianEllipticity)}, ${quantityPhrase('sharedEllipticity', z.sharedEllipticity)}`;
}

/** The short human summary printed by `skyloupe analyze`. */
export function formatSummary(r: Report): string {
  const o = r.frame.optics;
  const plate = o.plateScaleArcsecPerPx !== null;
  const lines: string[] = [];
  lines.push(`${r.frame.path}: ${r.frame.width} × ${r.frame.height} ${r.frame.format}${r.frame.cfa ? ` (${r.frame.cfa} mosaic, measured on 2 × 2 superpixels)` : ''}`);
  const opt = [
    o.focalLengthMm !== null ? `${o.focalLengthMm} mm` : 'focal length unknown',
    o.fNumber !== null ? `f/${o.fNumber}` : 'f-number unknown',
    o.pixelSizeUm !== null ? `${o.pixelSizeUm} µm pixels` : 'pixel size unknown',
  ];
  const cards = o.source.keywords ? [o.source.keywords.focalLengthMm, o.source.keywords.fNumber, o.source.keywords.pixelSizeUm].filter((k) => k) : [];
  lines.push(`optics: ${opt.join(', ')}${plate ? `, ${o.plateScaleArcsecPerPx!.toFixed(3)}"/px` : ''}${cards.length ? ` (from ${cards.join(', ')})` : ''}`);
  if (r.frame.saturation) lines.push(`saturation: ${saturationText(r.frame.saturation)}`);
  const d = r.detection;
  const flagged = Object.entries(d.flagged).map(([k, v]) => `${v} ${k}`).join(', ');
  lines.push(`stars: ${d.candidates} detected, ${d.measured} measured, ${d.usedForField} used for the field${flagged ? ` (set aside: ${flagged})` : ''}`);
  if (d.subset) lines.push(`note: measured a subset, ${d.subset.rule} of ${d.subset.of}`);
  const region = r.frame.dataRegion;
  if (region && region.kind !== 'full') lines.push(`sky: ${region.note}${d.outsideData ? `; ${d.outsideData} detections outside it dropped` : ''}`);
  const s = r.summary;
  const arc = plate && s.medianFwhmArcsec !== null ? ` = ${formatQuantity('medianFwhmArcsec', s.medianFwhmArcsec)}"` : '';
  lines.push(`median FWHM ${formatQuantity('medianFwhmPx', s.medianFwhmPx)} px${arc}, HFD ${formatQuantity('medianHfdPx', s.medianHfdPx)} px, ${quantityPhrase('medianEllipticity', s.medianEllipticity)}`);
  lines.push(`centre:  ${zoneLine(s.center, plate)}`);
  lines.push(`corners: ${zoneLine(s.corners, plate)}`);
  if (s.center.medianFwhmPx && s.corners.medianFwhmPx) {
    lines.push(`corner/centre FWHM ratio ${(s.corners.medianFwhmPx / s.center.medianFwhmPx).toFixed(2)}`);
  }
  lines.push(...zoneStackLines(r));
  if (r.astrometry) lines.push(...skySummaryLines(r.astrometry));
  if (!plate) lines.push('tip: give --focal-length and --pixel-size to get arcseconds and micrometres');
  if (r.findings && r.findings.length) {
    lines.push('');
    lines.push(formatFindings(r.findings as Parameters<typeof formatFindings>[0]));
  }
  return lines.join('\n');
}

/** The zone stacks (report.zonePsf) as a grid in the frame's displayed orientation. */
function zoneStackLines(r: Report): string[] {
  const zp = r.zonePsf;
  if (!zp || !zp.zones.some((z) => z.stacked > 0)) return [];
  const flip = r.frame.display?.topRow === 'last';
  const cell = (col: number, row: number) => {
    const z = zp.zones.find((q) => q.col === col && q.row === row);
    return !z || z.stacked === 0 ? 'no stars'.padEnd(15) : `${z.fwhmPx === null ? '–' : z.fwhmPx.toFixed(2)} ${z.ellipticity === null ? '–' : z.ellipticity.toFixed(3)} ${String(z.stacked).padStart(4)}`.padEnd(15);
  };
  const out = ['stacked stars per zone, as displayed (FWHM px and ellipticity of each stack, stars in it):'];
  for (let k = 0; k < zp.rows; k++) {
    const row = flip ? zp.rows - 1 - k : k;
    out.push('  ' + Array.from({ length: zp.cols }, (_, c) => cell(c, row)).join(' | ').trimEnd());
  }
  if (zp.note) out.push(`  note: ${zp.note}`);
  return out;
}
