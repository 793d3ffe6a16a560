/**
 * The words people read, in one place: the severity scale, the names of the summary's
 * quantities, the labels of the numbers behind each finding, and one formatter per quantity.
 * The CLI, the HTML report and the page all take them from here, so one quantity has one name
 * and one value everywhere. Codes (TILT, STOP_DOWN, ...) and JSON keys are for scripts only.
 */

export type Severity = 'major' | 'minor' | 'info';

/** The severity scale as people read it; the JSON keeps major / minor / info. */
export const SEVERITY_WORDS: Readonly<Record<Severity, string>> = { major: 'Act on it', minor: 'Worth a look', info: 'Note' };

export const SEVERITY_ORDER: Readonly<Record<Severity, number>> = { major: 0, minor: 1, info: 2 };

export function severityWord(s: string): string {
  return SEVERITY_WORDS[s as Severity] ?? 'Note';
}

/** Findings most urgent first (stable within one severity). */
export function bySeverity<T extends { severity: string }>(findings: readonly T[]): T[] {
  const rank = (s: string) => SEVERITY_ORDER[s as Severity] ?? 3;
  return [...findings].sort((a, b) => rank(a.severity) - rank(b.severity));
}

/** "3 findings: 1 to act on, 1 worth a look, 1 note" (the counts in the scale's own words). */
export function findingsCountWords(findings: readonly { severity: string }[] | undefined): string {
  if (!findings) return 'no diagnosis';
  if (findings.length === 0) return 'no findings';
  const n = (s: Severity) => findings.filter((f) => f.severity === s).length;
  const parts = [
    n('major') ? `${n('major')} to act on` : null,
    n('minor') ? `${n('minor')} worth a look` : null,
    n('info') ? `${n('info')} note${n('info') === 1 ? '' : 's'}` : null,
  ].filter(Boolean);
  return `${findings.length} finding${findings.length === 1 ? '' : 's'}: ${parts.join(', ')}`;
}

/**
 * A fault's verdict on the same scale as the findings: the severity of the finding with this
 * code when there is one, else "within the noise". For figures that name a fault (the tilt).
 */
export function faultVerdict(findings: readonly { code: string; severity: string }[] | undefined, code: string): { severity: Severity | null; words: string } {
  const f = findings?.find((x) => x.code === code);
  if (!f) return { severity: null, words: 'within the noise' };
  return { severity: f.severity as Severity, words: severityWord(f.severity).toLowerCase() };
}

// ---------- the summary's quantities ----------

export interface QuantityWords {
  /** The name a person reads. */
  label: string;
  /** Unit shown after the value ('' for a pure number). */
  unit: string;
  /** Decimals shown. */
  digits: number;
  /** One sentence: what it is and how it is made. */
  help: string;
}

/**
 * The summary's quantities (report.summary and its zones: the JSON keys). Two ellipticities,
 * named apart: the typical single star's (median of 1 - b/a, which each star's noise raises,
 * optics.md 1.6) and the elongation the stars share (their shapes averaged as vectors, so noise
 * and random directions cancel; optics.md 1.6: "average e1 and e2, then take the modulus").
 */
export const QUANTITIES = {
  medianFwhmPx: { label: 'FWHM', unit: 'px', digits: 2, help: 'median profile-fit full width at half maximum of the clean stars' },
  medianFwhmArcsec: { label: 'FWHM', unit: '″', digits: 2, help: 'the median FWHM on the sky (needs focal length and pixel size)' },
  medianHfdPx: { label: 'HFD', unit: 'px', digits: 2, help: 'median half-flux diameter of the clean stars' },
  medianEllipticity: { label: 'typical star ellipticity', unit: '', digits: 3, help: 'median 1 − b/a of the single clean stars; each star\'s noise adds to it, so even round stars read above 0' },
  sharedEllipticity: { label: 'shared ellipticity', unit: '', digits: 3, help: '1 − b/a of the stars\' average shape (their e1, e2 averaged as vectors; the corners each on their own, then averaged): the elongation the stars have in common, with noise averaged out' },
} as const satisfies Record<string, QuantityWords>;

export type QuantityKey = keyof typeof QUANTITIES;

/** A value in its quantity's digits; "n/a" when there is none. */
export function formatQuantity(key: QuantityKey, v: number | null | undefined): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return 'n/a';
  return v.toFixed(QUANTITIES[key].digits);
}

/** "typical star ellipticity 0.071" / "FWHM 2.31 px": name, value and unit as one phrase. */
export function quantityPhrase(key: QuantityKey, v: number | null | undefined): string {
  const q = QUANTITIES[key];
  const val = formatQuantity(key, v);
  return `${q.label} ${val}${q.unit && val !== 'n/a' ? (q.unit === '″' ? q.unit : ` ${q.unit}`) : ''}`;
}

// ---------- the numbers behind a finding ----------

/** Label and unit of each number a finding carries (Finding.numbers keys). */
export const NUMBER_WORDS: Readonly<Record<string, { label: string; unit?: string }>> = {
  // coverage and sampling
  zonesWithStars: { label: 'zones with clean stars' },
  zonesWithData: { label: 'zones that hold sky' },
  zonesWithShapes: { label: 'zones with three or more shapes' },
  cornersWithStars: { label: 'corners with clean stars' },
  cornersWithData: { label: 'corners that hold sky' },
  cleanStars: { label: 'clean stars' },
  starsUsed: { label: 'stars used' },
  starsWithShapes: { label: 'stars with measured shapes' },
  medianFwhmPx: { label: 'median FWHM', unit: 'px' },
  limitPx: { label: 'limit', unit: 'px' },
  cornerToCentreFwhm: { label: 'corner FWHM / centre FWHM' },
  // pixel shape and trailing
  axisRatio: { label: 'stretch a/b' },
  angleDeg: { label: 'direction', unit: '°' },
  angleErrDeg: { label: 'direction uncertainty', unit: '°' },
  elongation: { label: 'elongation' },
  lengthPx: { label: 'trail length', unit: 'px' },
  lengthErrPx: { label: 'trail length uncertainty', unit: 'px' },
  rotationDeg: { label: 'field rotation', unit: '°' },
  rotationErrDeg: { label: 'field rotation uncertainty', unit: '°' },
  significance: { label: 'certainty', unit: 'σ' },
  // tilt
  acrossWidthUm: { label: 'focus change across the width', unit: 'µm' },
  acrossHeightUm: { label: 'focus change across the height', unit: 'µm' },
  acrossWidthErrUm: { label: 'focus change across the width, uncertainty', unit: 'µm' },
  acrossHeightErrUm: { label: 'focus change across the height, uncertainty', unit: 'µm' },
  towardLens: { label: 'side to bring toward the lens' },
  awayFromLens: { label: 'side farther from it' },
  acrossWidthBlurPx: { label: 'blur change across the width', unit: 'px' },
  acrossHeightBlurPx: { label: 'blur change across the height', unit: 'px' },
  axisDeg: { label: 'direction of steepest focus change', unit: '°' },
  axisErrDeg: { label: 'direction uncertainty', unit: '°' },
  uphillDeg: { label: 'direction in which the focus error grows', unit: '°' },
  tiltMrad: { label: 'tilt: shim per mm of ring diameter', unit: 'µm per mm' },
  worstCorner: { label: 'softest corner' },
  magnitudeUm: { label: 'tilt across the frame', unit: 'µm' },
  farSide: { label: 'side farther from the lens' },
  nearSide: { label: 'side nearer the lens' },
  signSignificance: { label: 'certainty of the sign', unit: 'σ' },
  stepUm: { label: 'focus step between the frames', unit: 'µm' },
  // spacing, astigmatism, curvature
  pattern: { label: 'pattern' },
  radMinusTanPx2: { label: 'radial minus tangential size', unit: 'px²' },
  radMinusTanErrPx2: { label: 'radial minus tangential size, uncertainty', unit: 'px²' },
  cornerERadial: { label: 'corner elongation toward the centre (radial +, tangential −)' },
  cornerToCentreSize: { label: 'corner size / centre size' },
  stepMm: { label: 'spacing step to try', unit: 'mm' },
  centerX: { label: 'centre x', unit: 'px' },
  centerY: { label: 'centre y', unit: 'px' },
  centerErrX: { label: 'centre x uncertainty', unit: 'px' },
  centerErrY: { label: 'centre y uncertainty', unit: 'px' },
  cornerDefocusUm: { label: 'corner defocus', unit: 'µm' },
  cornerDefocusErrUm: { label: 'corner defocus uncertainty', unit: 'µm' },
  cornerBlurPx: { label: 'corner defocus blur', unit: 'px' },
  roundGrowthRatio: { label: 'corner size / centre size (round stars)' },
  radiusMm: { label: 'focal surface radius', unit: 'mm' },
  // coma
  tail: { label: 'flares point' },
  cornerComaPx: { label: 'coma flare at the corners', unit: 'px' },
  cornerComaRatio: { label: 'coma flare / star size at the corners' },
  gradientPx: { label: 'coma flare growth to the corners', unit: 'px' },
  gradientErrPx: { label: 'coma flare growth uncertainty', unit: 'px' },
  centreOffsetFraction: { label: 'coma-free point from the centre (fraction of the diagonal)' },
  x: { label: 'flare along x', unit: 'px' },
  y: { label: 'flare along y', unit: 'px' },
  err: { label: 'flare uncertainty', unit: 'px' },
  // stopping down and optics
  fNumber: { label: 'f-number' },
  worthwhileTo: { label: 'stopping down pays up to f-number' },
  nextFNumber: { label: 'one stop down: f-number' },
  nextCornerFwhmPx: { label: 'one stop down: corner FWHM', unit: 'px' },
  nextCentreFwhmPx: { label: 'one stop down: centre FWHM', unit: 'px' },
  relativeErr: { label: 'relative uncertainty' },
  pixelSizeUm: { label: 'pixel size', unit: 'µm' },
  // plate solution and lens
  cornerPercent: { label: 'distortion at the corners', unit: '%' },
  cornerPercentErr: { label: 'distortion at the corners, uncertainty', unit: '%' },
  edgePercentX: { label: 'distortion at the left and right edges', unit: '%' },
  edgePercentY: { label: 'distortion at the top and bottom edges', unit: '%' },
  maxShiftPx: { label: 'largest shift of a star', unit: 'px' },
  k1: { label: 'radial term k1' },
  k1Err: { label: 'radial term k1, uncertainty' },
  k2: { label: 'radial term k2' },
  k2Err: { label: 'radial term k2, uncertainty' },
  starsMatched: { label: 'catalogue stars matched' },
  measuredMm: { label: 'measured focal length', unit: 'mm' },
  statedMm: { label: 'stated focal length', unit: 'mm' },
  differencePercent: { label: 'difference from the stated value', unit: '%' },
  // series
  better: { label: 'sharper frame' },
  a: { label: 'FWHM of frame A' },
  b: { label: 'FWHM of frame B' },
  differencePct: { label: 'difference B − A', unit: '%' },
  bestSpacingMm: { label: 'best spacing', unit: 'mm' },
  uncertaintyMm: { label: 'best spacing uncertainty', unit: 'mm' },
  evidence: { label: 'found from' },
  frames: { label: 'frames' },
  bestFocusUm: { label: 'best focus, field average', unit: 'µm' },
  bestFieldFocusUm: { label: 'best focus for the whole field', unit: 'µm' },
  centreFocusUm: { label: 'best focus at the centre', unit: 'µm' },
  fieldFocusSpreadUm: { label: 'spread of best focus over the field', unit: 'µm' },
  cfzHalfWidthUm: { label: 'critical focus zone, half width', unit: 'µm' },
  cornerUm: { label: 'corners\' focus minus the centre\'s', unit: 'µm' },
  cornerErrUm: { label: 'corners\' focus uncertainty', unit: 'µm' },
  separationUm: { label: 'sagittal minus tangential focus', unit: 'µm' },
  separationErrUm: { label: 'sagittal minus tangential focus, uncertainty', unit: 'µm' },
  longitudinalUm: { label: 'rim focus minus core focus', unit: 'µm' },
  errUm: { label: 'uncertainty', unit: 'µm' },
  blurDiameterPx: { label: 'smallest blur', unit: 'px' },
  blurDiameterUm: { label: 'smallest blur', unit: 'µm' },
  transverseUm: { label: 'transverse blur', unit: 'µm' },
};

/** "corner defocus (µm)": a number's label with its unit; a key missing from the table is spelled out. */
export function numberLabel(key: string): string {
  const w = NUMBER_WORDS[key];
  if (w) return w.unit && w.unit !== 'σ' ? `${w.label} (${w.unit})` : w.label;
  return key.replace(/([a-z0-9])([A-Z])/g, '$1 $2').toLowerCase();
}

/** A number as shown beside its label: integers as they are, others to three significant places or so. */
export function numberText(v: unknown, key?: string): string {
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) return '–';
    const t = Number.isInteger(v) ? String(v) : v.toFixed(Math.abs(v) >= 100 ? 1 : Math.abs(v) >= 1 ? 2 : 3);
    return key && NUMBER_WORDS[key]?.unit === 'σ' ? `${t} σ` : t;
  }
  return v === null || v === undefined ? '–' : String(v);
}

/** The key of a number's uncertainty, if the numbers hold one: fooErrUm for fooUm, fooErr for foo, fooErrX for fooX. */
function errKeyOf(key: string, numbers: Record<string, unknown>): string | null {
  const m = /^(.*?)(Um|Mm|Px2|Px|Deg|Percent|X|Y)?$/.exec(key)!;
  const cands = [`${m[1]}Err${m[2] ?? ''}`, `${key}Err`];
  if (m[1] === 'center' && (m[2] === 'X' || m[2] === 'Y')) cands.push(`centerErr${m[2]}`);
  for (const c of cands) if (c !== key && c in numbers) return c;
  return null;
}

/**
 * The numbers behind a finding as rows a person reads: each label from NUMBER_WORDS, a value
 * with its uncertainty joined as "12 ± 3" (the uncertainty's own row dropped), null values left out.
 */
export function findingNumberRows(numbers: Record<string, unknown> | undefined): { key: string; label: string; value: string }[] {
  if (!numbers) return [];
  const errs = new Set<string>();
  for (const k of Object.keys(numbers)) {
    const e = errKeyOf(k, numbers);
    if (e) errs.add(e);
  }
  const rows: { key: string; label: string; value: string }[] = [];
  for (const [k, v] of Object.entries(numbers)) {
    if (errs.has(k) || v === null || v === undefined) continue;
    const e = errKeyOf(k, numbers);
    const ev = e ? numbers[e] : null;
    const value = typeof ev === 'number' && Number.isFinite(ev) ? `${numberText(v)} ± ${numberText(ev)}` : numberText(v, k);
    rows.push({ key: k, label: numberLabel(k), value });
  }
  return rows;
}
