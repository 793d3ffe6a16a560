// The data-quality extension of a real HST frame (Debian python-drizzle-testdata: ACS/HRC, 47 Tuc,
// SCI/ERR/DQ) read by skyloupe, against astropy reading the same file (Debian python3-astropy):
// the pixels whose DQ has a saturation bit (256 full-well or A-to-D, 2048 A-to-D; the ACS DQ table
// published by STScI) are skyloupe's saturated mask, those with an unusable bit (1, 2, 4, 8, 128)
// are NaN, and every other pixel keeps the SCI value. Needs both packages (CI installs them).
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { readFrame } from '../../core/frame/read.ts';
import { frameSaturation } from '../../core/frame/saturation.ts';

const HST = '/usr/share/python-drizzle/test_data/j8bt06nyq_flt.fits';

function astropyCounts(): { saturated: number; unusable: number; checksum: number; width: number } {
  const code = `
import json, numpy as np
from astropy.io import fits
with fits.open(${JSON.stringify(HST)}) as h:
    sci = h['SCI', 1].data.astype('f8'); dq = h['DQ', 1].data.astype('i8')
sat = (dq & (256 | 2048)) != 0
bad = (dq & (1 | 2 | 4 | 8 | 128)) != 0
idx = np.flatnonzero(sat)
print(json.dumps(dict(saturated=int(sat.sum()), unusable=int(bad.sum()), checksum=float(np.sum(sci[~bad])), width=int(sci.shape[1]), first=[int(i) for i in idx[:50]])))
`;
  const r = spawnSync('/usr/bin/python3', ['-c', code], { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`astropy failed: ${r.stderr} (apt-get install -y python3-astropy python3-numpy)`);
  return JSON.parse(r.stdout);
}

describe('DQ extension of a real HST frame (astropy reads the same file)', () => {
  it('saturated mask, unusable pixels as NaN, the rest unchanged; the source is DQ', async () => {
    if (!existsSync(HST)) throw new Error(`${HST} is missing: apt-get install -y python-drizzle-testdata (CI installs it)`);
    const ref = astropyCounts() as ReturnType<typeof astropyCounts> & { first: number[] };
    const f = await readFrame(HST);
    expect(f.qualitySource).toBe('DQ');
    expect(f.qualityCounts).toEqual({ saturated: ref.saturated, unusable: ref.unusable });
    let nSat = 0, nNaN = 0, sum = 0;
    for (let i = 0; i < f.data.length; i++) {
      if (f.saturatedMask![i]) nSat++;
      const v = f.data[i];
      if (v !== v) nNaN++; else sum += v;
    }
    expect(nSat).toBe(ref.saturated);
    expect(nNaN).toBe(ref.unusable);
    // the same pixels: the first 50 saturated ones in storage order, and the sum of the kept values (float32 data)
    for (const i of ref.first) expect(f.saturatedMask![i]).toBe(1);
    expect(Math.abs(sum / ref.checksum - 1)).toBeLessThan(1e-9);
    console.log(`HST DQ: ${nSat} saturated, ${nNaN} unusable pixels (astropy: ${ref.saturated}, ${ref.unusable})`);
    expect(frameSaturation(f)).toMatchObject({ level: null, source: 'DQ' });
  });
});
