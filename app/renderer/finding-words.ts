/**
 * Findings as the page says them: the engine's messages name the command line (skyloupe
 * focus-pair, skyloupe sweep, --f-number) and write units in ASCII (um, +-, deg); the page
 * names its own controls and writes µm, ±, °. Pure text functions, no DOM.
 */

/** What a finding asks the user to do, as a control of the page. */
export interface FindingAction {
  /** 'view:<name>' opens a view; 'optics' opens the optics fields. */
  target: string;
  label: string;
}

const CONTROL_WORDS: [RegExp, string][] = [
  [/\brun skyloupe focus-pair\b/g, 'put them in the Focus pair view'],
  [/\brun skyloupe sweep\b/g, 'put them in the Spacer sweep view'],
  [/\(skyloupe sweep\)/g, '(Spacer sweep view)'],
  [/\bskyloupe through-focus\b/g, 'a focus series'],
  [/\(give them with --f-number \/ --pixel-size\)/g, '(enter them in the Optics fields)'],
  [/\(give it with --f-number\)/g, '(enter it in the Optics fields)'],
  [/--f-number\b/g, 'the f-number field (Optics)'],
  [/--pixel-size\b/g, 'the pixel size field (Optics)'],
  [/--focal-length\b/g, 'the focal length field (Optics)'],
];

const UNIT_WORDS: [RegExp, string][] = [
  [/\+-\s*/g, '± '],
  [/(\d)\s*um\b/g, '$1 µm'],
  [/(\d)\s*deg\b/g, '$1°'],
  [/\bum\b/g, 'µm'],
  [/\bdeg\b/g, '°'],
];

/** Units in the symbols people read: "2.1 um" -> "2.1 µm", "+-" -> "±", "25 deg" -> "25°". */
export function unitWords(text: string): string {
  let out = text;
  for (const [re, to] of UNIT_WORDS) out = out.replace(re, to);
  return out;
}

/** A finding's message as the page says it. */
export function pageMessage(message: string): string {
  let out = message;
  for (const [re, to] of CONTROL_WORDS) out = out.replace(re, to);
  return unitWords(out);
}

/** The page's controls for what the message (in the engine's words) tells the user to do. */
export function findingActions(code: string, message: string): FindingAction[] {
  const out: FindingAction[] = [];
  if (/skyloupe focus-pair/.test(message) || code === 'TILT') out.push({ target: 'view:focuspair', label: 'Open Focus pair' });
  if (/skyloupe sweep/.test(message) || code === 'SPACING') out.push({ target: 'view:sweep', label: 'Open Spacer sweep' });
  if (/--f-number|--pixel-size|--focal-length/.test(message) || code === 'OPTICS_UNKNOWN') out.push({ target: 'optics', label: 'Enter the optics' });
  return out;
}
