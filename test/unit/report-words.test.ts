/**
 * The words people read come from one table (core/report/words.ts): the severity scale, the two
 * ellipticities, and a label for every number a finding carries. Checks against the definitions
 * they name: ellipticity 1 - b/a and the distortion (A^2 - B^2)/(A^2 + B^2) (Source Extractor's
 * ELLIPTICITY; optics.md 1.2 and 1.3), and "average e1 and e2, then take the modulus" (optics.md 1.6).
 */
import { describe, expect, it } from 'vitest';
import { readFileSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';
import {
  NUMBER_WORDS, QUANTITIES, SEVERITY_WORDS, faultVerdict, findingNumberRows, findingsCountWords, formatQuantity, numberLabel, quantityPhrase,
} from '../../core/report/words.ts';
import { SEVERITY_WORDS as SERIES_WORDS } from '../../core/series/words.ts';
import { ellipticityFromDistortion, sharedEllipticity } from '../../core/report/shared-ellipticity.ts';
import { formatFindings } from '../../core/diagnose/format.ts';
import { findingsHtml, findingsSvg } from '../../core/report/svg/panels.ts';
import { PRINT } from '../../core/report/svg/theme.ts';
import { mulberry32 } from '../helpers/rng.ts';

/** Distortion components of an ellipse with axes A >= B at angle theta (optics.md 1.3). */
function distortion(A: number, B: number, thetaDeg: number): { e1: number; e2: number } {
  const e = (A * A - B * B) / (A * A + B * B);
  const t = (2 * thetaDeg * Math.PI) / 180;
  return { e1: e * Math.cos(t), e2: e * Math.sin(t) };
}

describe('the severity scale', () => {
  const findings = [
    { code: 'STOP_DOWN', severity: 'info' as const, message: 'a note' },
    { code: 'TILT', severity: 'major' as const, message: 'act on this one' },
    { code: 'SPACING', severity: 'minor' as const, message: 'worth a look' },
  ];

  it('is one table, the same for single frames and series', () => {
    expect(SEVERITY_WORDS).toEqual({ major: 'Act on it', minor: 'Worth a look', info: 'Note' });
    expect(SERIES_WORDS).toBe(SEVERITY_WORDS);
  });

  it('the CLI text uses its words, most urgent first, and never a code', () => {
    const t = formatFindings(findings);
    const heads = t.split('\n').slice(1).map((l) => l.trim().split(/\s{2,}/)[0]);
    expect(heads).toEqual(['Act on it', 'Worth a look', 'Note']);
    expect(t).not.toMatch(/MAJOR|\bminor\b|\binfo\b|TILT|STOP_DOWN|SPACING/);
  });

  it('the HTML and the findings picture use its words; codes stay in data attributes only', () => {
    const html = findingsHtml(findings);
    const visible = html.replace(/<[^>]*>/g, ' ');
    expect(visible).toMatch(/Act on it[\s\S]*Worth a look[\s\S]*Note/);
    expect(visible).not.toMatch(/TILT|STOP_DOWN|SPACING|Act on this/);
    expect(html).toContain('data-code="TILT"');
    const svg = findingsSvg(findings, { theme: PRINT });
    expect(svg.replace(/<[^>]*>/g, ' ')).not.toMatch(/TILT|STOP_DOWN|SPACING/);
    expect(svg).toContain('Act on it');
  });

  it('counts in its words, and a fault figure takes the finding\'s severity', () => {
    expect(findingsCountWords(findings)).toBe('3 findings: 1 to act on, 1 worth a look, 1 note');
    expect(findingsCountWords([])).toBe('no findings');
    expect(faultVerdict(findings, 'TILT')).toEqual({ severity: 'major', words: 'act on it' });
    expect(faultVerdict(findings, 'COMA')).toEqual({ severity: null, words: 'within the noise' });
  });
});

describe('the two ellipticities', () => {
  it('ellipticity from the distortion: a/b = 1.25 is 1 - b/a = 0.2 (optics.md 1.2, 1.3)', () => {
    const { e1, e2 } = distortion(1.25, 1, 30);
    expect(ellipticityFromDistortion(Math.hypot(e1, e2))).toBeCloseTo(0.2, 12);
  });

  it('shared: stars alike in shape and direction share their whole ellipticity', () => {
    const stars = Array.from({ length: 20 }, (_, i) => ({ x: i, y: i, ...distortion(1.25, 1, 30) }));
    expect(sharedEllipticity(stars)).toBeCloseTo(0.2, 12);
  });

  it('shared: the same elongation in random directions averages toward 0 (1/sqrt(n), optics.md 1.6)', () => {
    const r = mulberry32(3);
    const stars = Array.from({ length: 4000 }, () => ({ x: 0, y: 0, ...distortion(1.25, 1, 180 * r()) }));
    // |mean of n unit-phase vectors| ~ e * sqrt(pi / (4 n)): about 0.003 for e = 0.22, n = 4000
    expect(sharedEllipticity(stars)!).toBeLessThan(0.012);
  });

  it('corners: a radial pattern is shared within each corner and survives; one average over all four would cancel it', () => {
    const c = { x: 100, y: 100 };
    const stars = [[0, 0], [200, 0], [0, 200], [200, 200]].flatMap(([x, y]) => {
      const theta = (Math.atan2(y - c.y, x - c.x) * 180) / Math.PI;
      return Array.from({ length: 5 }, () => ({ x, y, ...distortion(1.25, 1, theta) }));
    });
    expect(sharedEllipticity(stars)!).toBeLessThan(1e-12);
    expect(sharedEllipticity(stars, c)).toBeCloseTo(0.2, 12);
  });

  it('are named apart, each with one formatter', () => {
    expect(QUANTITIES.medianEllipticity.label).toBe('typical star ellipticity');
    expect(QUANTITIES.sharedEllipticity.label).toBe('shared ellipticity');
    expect(quantityPhrase('sharedEllipticity', 0.01937)).toBe('shared ellipticity 0.019');
    expect(quantityPhrase('medianFwhmPx', 2.9361)).toBe('FWHM 2.94 px');
    expect(formatQuantity('medianEllipticity', null)).toBe('n/a');
  });
});

describe('labels of the numbers behind a finding', () => {
  /** Every key of a `numbers: { ... }` literal in core (the numbers findings carry). */
  function numberKeys(): Set<string> {
    const keys = new Set<string>();
    const walk = (d: string) => {
      for (const f of readdirSync(d)) {
        const p = path.join(d, f);
        if (statSync(p).isDirectory()) walk(p);
        else if (p.endsWith('.ts') && !p.endsWith('.gen.ts')) {
          const src = readFileSync(p, 'utf8');
          for (const m of src.matchAll(/numbers: \{([^}]*)\}/g)) {
            // each property: `key: value` or the shorthand `key`
            for (const part of m[1].split(',')) {
              const k = /^\s*([A-Za-z][A-Za-z0-9]*)\s*(?::|$)/.exec(part);
              if (k) keys.add(k[1]);
            }
          }
        }
      }
    };
    walk(path.resolve('core'));
    keys.delete('numbers');
    return keys;
  }

  it('every key a finding can carry has a label in the table, in words with µm, ° (never um, deg, camelCase)', () => {
    const keys = numberKeys();
    expect(keys.size).toBeGreaterThan(60);
    const missing = [...keys].filter((k) => !(k in NUMBER_WORDS));
    expect(missing).toEqual([]);
    for (const k of keys) {
      const l = numberLabel(k);
      expect(l, k).not.toMatch(/\bum\b|\bdeg\b|\+-|[a-z][A-Z]/);
    }
    expect(numberLabel('cornerERadial')).not.toMatch(/eradial/i);
    expect(numberLabel('worthwhileTo')).not.toMatch(/worthwhile to$/);
  });

  it('a value and its uncertainty make one row "v ± err"; nulls are left out', () => {
    const rows = findingNumberRows({ acrossWidthUm: 23.8, acrossWidthErrUm: 2.06, axisDeg: -25.03, axisErrDeg: 1.94, tiltMrad: null, significance: 22.89 });
    expect(rows.map((r) => [r.label, r.value])).toEqual([
      ['focus change across the width (µm)', '23.80 ± 2.06'],
      ['direction of steepest focus change (°)', '-25.03 ± 1.94'],
      ['certainty', '22.89 σ'],
    ]);
  });
});

describe('words people read carry µm, ±, °', () => {
  /** Quoted and template strings of a source file, comments and FITS header comments left out. */
  function strings(file: string): string[] {
    const src = readFileSync(file, 'utf8').split('\n').filter((l) => !/^\s*(\/\/|\*|\/\*)/.test(l) && !/comment: '\[/.test(l)).join('\n');
    return [...src.matchAll(/`[^`]*`|'[^'\n]*'/g)].map((m) => m[0]);
  }
  const files = [
    'core/diagnose/findings.ts', 'core/diagnose/tilt.ts', 'core/diagnose/trailing.ts', 'core/diagnose/format.ts',
    'core/sky/finding.ts', 'core/sky/words.ts', 'core/cli/summary.ts', 'core/report/html.ts', 'core/report/words.ts',
    'core/report/svg/panels.ts', 'core/report/svg/sensor-side.ts', 'core/report/svg/zone-psf.ts', 'core/report/svg/size.ts',
  ];
  it.each(files)('%s', (f) => {
    const bad = strings(path.resolve(f)).filter((s) => /[\d}] ?um\b|\+-|[\d}] ?deg\b/.test(s));
    expect(bad).toEqual([]);
  });
});
