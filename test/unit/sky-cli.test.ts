// The command line's plate-solving options: a real frame (tetra3, ESA/Gustav Pettersson, CC BY-SA
// 3.0 IGO) is placed and its summary, JSON and CSV say so in one voice; --no-sky skips the step;
// a missing or foreign --catalogue file and a bad `catalogue` command get a clear one-line error.
import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';

const dir = path.resolve('test-output/sky-cli');
const frame = 'test/fixtures/real/tetra3_2019-07-29T204726_Alt60_Azi135_Try1.fits';

function run(args: string[]) {
  const r = spawnSync(process.execPath, ['bin/skyloupe.mjs', ...args], { encoding: 'utf8', timeout: 120_000 });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

describe('skyloupe analyze: plate solving on the command line', () => {
  it('places a real frame: summary, JSON and CSV agree', () => {
    mkdirSync(dir, { recursive: true });
    const json = path.join(dir, 'r.json'), csv = path.join(dir, 'r.csv');
    const r = run(['analyze', frame, '--json', json, '--csv', csv]);
    expect(r.code, r.err).toBe(0);
    const rep = JSON.parse(readFileSync(json, 'utf8'));
    const a = rep.astrometry;
    expect(a.solved).toBe(true);
    expect(r.out).toContain(`${a.starsMatched} stars matched to Hipparcos`);
    expect(r.out).toContain(`${a.scaleArcsecPerPx.toFixed(3)}"/px`);
    const lines = readFileSync(csv, 'utf8').trim().split('\r\n');
    const head = lines[0].split(',');
    const idCol = head.indexOf('catalogueId');
    const withId = lines.slice(1).filter((l) => /HIP \d+/.test(l.split(',')[idCol] ?? ''));
    expect(withId.length).toBe(a.starsMatched);
  });

  it('--no-sky skips the step; a bad --catalogue is a clear error', () => {
    mkdirSync(dir, { recursive: true });
    const json = path.join(dir, 'n.json');
    expect(run(['analyze', frame, '--no-sky', '--json', json, '--quiet']).code).toBe(0);
    expect(JSON.parse(readFileSync(json, 'utf8')).astrometry).toBeUndefined();
    const missing = run(['analyze', frame, '--catalogue', path.join(dir, 'nope.skycat')]);
    expect(missing.code).toBe(3);
    expect(missing.err.trim().split('\n')).toHaveLength(1);
    writeFileSync(path.join(dir, 'foreign.skycat'), 'not a catalogue');
    const foreign = run(['analyze', frame, '--catalogue', path.join(dir, 'foreign.skycat')]);
    expect(foreign.code).toBe(3);
    expect(foreign.err).toMatch(/not a skyloupe catalogue/);
    expect(run(['catalogue', path.join(dir, 'x.skycat')]).code).toBe(2);
    const notIndex = run(['catalogue', path.join(dir, 'x.skycat'), frame]);
    expect(notIndex.code).toBe(3);
    expect(notIndex.err).toMatch(/not an astrometry.net index file/);
  });
});
