// A child process of sky-band-cache.test.ts: takes the asterism bands named on the command line
// through bands.ts (so through the disk cache that SKYLOUPE_SKY_CACHE names) and prints a digest
// of each band's arrays, one JSON line.
import { createHash } from 'node:crypto';
import { bundledCatalogue } from '../../core/sky/bundled.ts';
import { bandIndex } from '../../core/sky/bands.ts';

const cat = bundledCatalogue();
const out: Record<string, string> = {};
for (const k of process.argv.slice(2).map(Number)) {
  const b = bandIndex(cat, k);
  const h = createHash('sha256');
  for (const a of [b.stars, b.starCellStart, b.starOrder, b.quads, b.codes, b.binStart]) h.update(new Uint8Array(a.buffer, a.byteOffset, a.byteLength));
  out[k] = `${b.count}:${h.digest('hex')}`;
}
process.stdout.write(`${JSON.stringify(out)}\n`);
