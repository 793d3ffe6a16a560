/**
 * Where the Electron binary is, found without loading the `electron` package: its index.js
 * tries to download the binary when it is missing, which must never happen here.
 */
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { createRequire } from 'node:module';

export interface ElectronLookup {
  /** Resolves a package file (default: require.resolve from this module). */
  resolve?: (id: string) => string;
  exists?: (p: string) => boolean;
  read?: (p: string) => string;
  env?: NodeJS.ProcessEnv;
}

export type ElectronFound = { found: true; binary: string } | { found: false; why: string };

export function findElectron(opts: ElectronLookup = {}): ElectronFound {
  const resolve = opts.resolve ?? createRequire(import.meta.url).resolve;
  const exists = opts.exists ?? existsSync;
  const read = opts.read ?? ((p: string) => readFileSync(p, 'utf8'));
  const env = opts.env ?? process.env;
  let pkgDir: string;
  try {
    pkgDir = path.dirname(resolve('electron/package.json'));
  } catch {
    return { found: false, why: 'the electron package is not installed' };
  }
  // electron's install step writes path.txt (the binary's path inside dist/)
  const pathFile = path.join(pkgDir, 'path.txt');
  if (!exists(pathFile)) return { found: false, why: 'the Electron binary was never downloaded (node_modules/electron/path.txt is missing)' };
  const rel = read(pathFile).trim();
  const base = env.ELECTRON_OVERRIDE_DIST_PATH || path.join(pkgDir, 'dist');
  const binary = path.join(base, rel);
  if (!rel || !exists(binary)) return { found: false, why: `the Electron binary is missing (${binary})` };
  return { found: true, binary };
}
