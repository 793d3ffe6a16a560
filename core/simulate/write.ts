/** Scene JSON file -> OUT.fits (16-bit, BZERO = 32768) + OUT.truth.json, each written atomically. */
import { randomBytes } from 'node:crypto';
import { readFile, rename, rm, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { SkyloupeError, unreadable, usage } from '../errors.ts';
import { encodeFits } from '../frame/fits-write.ts';
import { renderScene, type SimResult } from './render.ts';
import { parseScene } from './scene.ts';

export const TRUTH_SCHEMA = 'skyloupe.simtruth/1';

/** OUT.fits -> OUT.truth.json (a .fits/.fit/.fts extension is replaced, anything else is kept). */
export function truthPathFor(outFitsPath: string): string {
  const stem = outFitsPath.replace(/\.(fits|fit|fts)$/i, '');
  return `${stem}.truth.json`;
}

/** Write to a temporary file in the target's folder, then rename over the target. */
async function writeAtomic(target: string, bytes: Uint8Array | string): Promise<void> {
  const dir = path.dirname(target);
  const tmp = path.join(dir, `.${path.basename(target)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
  try {
    await writeFile(tmp, bytes, { flag: 'wx' });
    await rename(tmp, target);
  } catch (err) {
    await rm(tmp, { force: true }).catch(() => undefined);
    const e = err as NodeJS.ErrnoException;
    throw usage(`cannot write ${target}: ${e.code ?? e.message}`);
  }
}

/** The truth document: 10 significant digits are plenty (1e-5 px at x = 9600); one star per line keeps it small and diffable. */
export function truthJson(res: SimResult, fitsName: string): string {
  const round = (_k: string, v: unknown) => (typeof v === 'number' && !Number.isInteger(v) ? Number(v.toPrecision(10)) : v);
  const head = {
    schema: TRUTH_SCHEMA,
    frame: fitsName,
    width: res.width,
    height: res.height,
    conventions: 'pixel centres at integers, x = column, y = row as stored (first row y = 0); angles in degrees from +x toward +y',
    global: res.truth.global,
    scene: res.truth.scene,
  };
  const body = JSON.stringify(head, round, 1);
  const stars = res.truth.stars.map((s) => JSON.stringify(s, round)).join(',\n');
  return `${body.slice(0, -2)},\n "stars": [\n${stars}\n ]\n}\n`;
}

/** FITS bytes for a rendered frame: 16-bit unsigned via BZERO 32768 when quantised, else 32-bit float. */
export function fitsBytes(res: SimResult): Uint8Array {
  const quantized = res.truth.scene.quantize;
  return encodeFits({
    width: res.width,
    height: res.height,
    data: res.data,
    bitpix: quantized ? 16 : -32,
    ...(quantized ? { bzero: 32768, bscale: 1 } : {}),
    cards: res.cards,
  });
}

export async function simulateToFiles(sceneJsonPath: string, outFitsPath: string): Promise<{ truthPath: string }> {
  let text: string;
  try {
    text = await readFile(sceneJsonPath, 'utf8');
  } catch (err) {
    throw unreadable(`cannot read scene ${sceneJsonPath}: ${(err as NodeJS.ErrnoException).code ?? String(err)}`);
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (err) {
    throw new SkyloupeError('usage', `scene: ${sceneJsonPath} is not valid JSON (${(err as Error).message})`);
  }
  const res = renderScene(parseScene(json));
  const truthPath = truthPathFor(outFitsPath);
  await writeAtomic(outFitsPath, fitsBytes(res));
  await writeAtomic(truthPath, truthJson(res, path.basename(outFitsPath)));
  return { truthPath };
}
