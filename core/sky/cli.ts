/** `skyloupe catalogue`: a deeper star catalogue from astrometry.net index files; and loading one. */
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { SkyloupeError, usage } from '../errors.ts';
import { writeFileAtomic } from '../report/save.ts';
import { parse } from '../cli/args.ts';
import { decodeCatalogue, encodeCatalogue, type Catalogue } from './catalogue.ts';
import { mergeStars, readAstrometryIndex } from './astrometry-index.ts';

export const HELP_CATALOGUE = `usage: skyloupe catalogue OUT.skycat INDEX.fits [INDEX.fits ...]

Makes a star catalogue for plate solving (skyloupe analyze --catalogue OUT.skycat) from
astrometry.net index files, e.g. Debian's astrometry-data-tycho2-07, -08, -09 (Tycho-2,
BSD-2; /usr/share/astrometry/index-tycho2-*.fits). The stars of all files are merged (one
within 1 arcsec of a brighter one is dropped). The index files are only read.

options:
  --name NAME           the catalogue's name in reports (default: Tycho-2 (astrometry.net index))
  -h, --help            this text`;

export async function catalogueCommand(argv: string[], out: (s: string) => void): Promise<number> {
  const { values, positionals } = parse(argv, { name: { type: 'string' } }, 'catalogue');
  if (values.help) { out(HELP_CATALOGUE); return 0; }
  if (positionals.length < 2) throw usage('catalogue: give OUT.skycat and at least one index file (see skyloupe catalogue --help)');
  const [target, ...inputs] = positionals;
  if (inputs.some((p) => path.resolve(p) === path.resolve(target))) throw usage('catalogue: OUT would overwrite an input file');
  const lists = [];
  let band = 'unknown';
  for (const f of inputs) {
    let bytes: Uint8Array;
    try {
      bytes = new Uint8Array(await readFile(f));
    } catch (err) {
      throw new SkyloupeError('unreadable', `${f}: ${(err as Error).message}`);
    }
    const r = readAstrometryIndex(bytes, f);
    band = r.band;
    lists.push(r.stars);
    out(`${f}: ${r.stars.length} stars`);
  }
  const stars = mergeStars(lists);
  const name = typeof values.name === 'string' ? values.name : 'Tycho-2 (astrometry.net index)';
  const bin = encodeCatalogue(stars, {
    name,
    source: `astrometry.net index files ${inputs.map((p) => path.basename(p)).join(', ')} (Tycho-2 positions and ${band} magnitudes)`,
    idPrefix: '', epoch: 2000, positionErrorArcsec: 0.1, band,
    cellDeg: stars.length > 400_000 ? 1 : 2,
  });
  await writeFileAtomic(target, bin);
  out(`${target}: ${stars.length} stars (${(bin.length / 1e6).toFixed(1)} MB)`);
  return 0;
}

/** A catalogue file for --catalogue, with a clear message when it is missing or not one. */
export async function loadCatalogueFile(file: string): Promise<Catalogue> {
  let bytes: Uint8Array;
  try {
    bytes = new Uint8Array(await readFile(file));
  } catch (err) {
    throw new SkyloupeError('unreadable', `--catalogue ${file}: ${(err as Error).message}`);
  }
  try {
    return decodeCatalogue(bytes);
  } catch (err) {
    throw new SkyloupeError('unreadable', `--catalogue ${file}: ${(err as Error).message}`);
  }
}
