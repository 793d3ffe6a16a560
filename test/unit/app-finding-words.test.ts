/**
 * The page's wording of findings: the engine's own messages (core/diagnose/findings.ts, read from
 * a real diagnosis) lose their command-line words and ASCII units; every number stays.
 * Units: µm, ±, ° are the project's rule for text people read (BRIEF common rules).
 */
import { describe, expect, it } from 'vitest';
import { pageMessage, findingActions, unitWords } from '../../app/renderer/finding-words.ts';

/** Messages as core/diagnose/findings.ts and context.ts write them (copied from their templates). */
const TILT = 'Sensor tilt: focus changes by about 25 um across the frame diagonal (24 +- 2.1 um across the width, 7 +- 0.69 um across the height), steepest along -25 deg +- 1.9 (top-left to bottom-right; 23 sigma). One frame cannot tell which side is too close to the lens: take two frames a known focus step apart and run skyloupe focus-pair to find the side to shim. A shim of about 2.91 um per mm of ring diameter corrects it (e.g. 146 um on a 50 mm ring).';
const SPACING = 'Which way to move depends on the corrector design: change the spacing in steps of about 0.30 mm, take a frame at each, and run skyloupe sweep, which finds the spacing where the pattern changes sign.';
const OPTICS = 'F-number and pixel size are unknown, so focus errors are given as blur in pixels, not micrometres at the sensor (give them with --f-number / --pixel-size).';

const numbers = (s: string) => (s.match(/-?\d+(?:\.\d+)?/g) ?? []).join(' ');

describe('page wording of findings', () => {
  it('writes µm, ± and ° and keeps every number', () => {
    const t = pageMessage(TILT);
    expect(t).not.toMatch(/\bum\b|\+-|\bdeg\b/);
    expect(t).toContain('24 ± 2.1 µm');
    expect(t).toContain('-25° ± 1.9');
    expect(numbers(t)).toBe(numbers(TILT));
  });

  it('names the page controls instead of commands and flags', () => {
    expect(pageMessage(TILT)).toContain('Focus pair view');
    expect(pageMessage(SPACING)).toContain('Spacer sweep view');
    expect(pageMessage(OPTICS)).toContain('Optics fields');
    for (const m of [TILT, SPACING, OPTICS]) expect(pageMessage(m)).not.toMatch(/skyloupe [a-z]|--[a-z]/);
  });

  it('offers the control each message asks for', () => {
    expect(findingActions('TILT', TILT).map((a) => a.target)).toEqual(['view:focuspair']);
    expect(findingActions('SPACING', SPACING).map((a) => a.target)).toEqual(['view:sweep']);
    expect(findingActions('OPTICS_UNKNOWN', OPTICS).map((a) => a.target)).toEqual(['optics']);
    expect(findingActions('CLEAN', 'Nothing to act on.')).toEqual([]);
  });

  it('leaves words that merely contain the letters alone', () => {
    expect(unitWords('a drum and a degree')).toBe('a drum and a degree');
  });
});
