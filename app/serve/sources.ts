/** Paths of the engine pieces when running from the TypeScript sources (browser mode, tests). */
import path from 'node:path';
import { fileURLToPath } from 'node:url';

export const SOURCE_WORKER_URL = new URL('../engine/worker-boot.mjs', import.meta.url);
export const DEMO_FRAME = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..', 'sample-data', 'demo-frame.fits');
