// The coma and defocus calibration tables are ray-traced by core/field/coma-calibration.ts and
// stored in calibration-tables.gen.ts to spare each process the ray tracing: the stored module
// must be exactly what the code computes now (run npm run build:calibration after changing it),
// and the tables in use must be the stored ones.
import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { comaTable, computeComaTable, computeDefocusTable, defocusTable } from '../../core/field/coma-calibration.ts';
import { calibrationModule, STORED_OBSTRUCTIONS } from '../../bin/build-calibration.ts';

describe('stored calibration tables', () => {
  it('the committed module is what the ray tracing gives now, bit for bit', () => {
    expect(readFileSync(new URL('../../core/field/calibration-tables.gen.ts', import.meta.url), 'utf8')).toBe(calibrationModule());
  });

  it('the tables in use are the stored ones; other obstructions are ray-traced', () => {
    const c = comaTable(), cc = computeComaTable();
    for (const k of ['x', 'T', 'D', 'c'] as const) expect(Array.from(c[k])).toEqual(Array.from(cc[k]));
    for (const eps of STORED_OBSTRUCTIONS) expect(Array.from(defocusTable(eps).H)).toEqual(Array.from(computeDefocusTable(eps).H));
    // an obstructed reflector's table is not stored: it is computed, and differs from the lens's
    const r = defocusTable(0.35);
    expect(Array.from(r.H)).toEqual(Array.from(computeDefocusTable(0.35).H));
    expect(r.H[20]).not.toBe(defocusTable(0).H[20]);
  });
});
