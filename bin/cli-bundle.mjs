// The command line as one prebuilt JavaScript bundle, so a run does not spend ~0.7 s
// compiling TypeScript through tsx at every start. `npm ci` builds it (the `prepare` script);
// bin/skyloupe.mjs builds it on first use after a source changed, and falls back to the
// TypeScript sources through tsx when esbuild is missing or the build fails.
// Each build lives in dist/cli/<fingerprint of the sources>/: a running command never sees
// its files replaced, and two commands started together after an edit cannot collide.
import { existsSync, mkdirSync, readdirSync, renameSync, rmSync, statSync, writeFileSync, copyFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const CLI_ROOT = path.join(ROOT, 'dist', 'cli');

/** A fingerprint of the engine's sources: their paths, sizes and modification times. */
export function sourceFingerprint() {
  const h = createHash('sha256');
  const walk = (dir) => {
    for (const e of readdirSync(dir, { withFileTypes: true }).sort((a, b) => (a.name < b.name ? -1 : 1))) {
      const p = path.join(dir, e.name);
      if (e.isDirectory()) walk(p);
      else if (/\.(ts|mjs|js|json)$/.test(e.name)) { const s = statSync(p); h.update(`${p}\0${s.size}\0${s.mtimeMs}\n`); }
    }
  };
  walk(path.join(ROOT, 'core'));
  const pkg = statSync(path.join(ROOT, 'package-lock.json'), { throwIfNoEntry: false });
  h.update(`lock\0${pkg ? pkg.mtimeMs : 0}\n`);
  return h.digest('hex').slice(0, 16);
}

/** The bundle's entry for the sources as they are now. */
export function cliEntry(fp = sourceFingerprint()) {
  return path.join(CLI_ROOT, fp, 'skyloupe.mjs');
}

/** Builds the bundle for the current sources unless it exists; returns its entry file. */
export async function ensureCli() {
  const fp = sourceFingerprint();
  const entry = cliEntry(fp);
  if (existsSync(entry)) return entry;
  const esbuild = await import('esbuild');
  const tmp = path.join(CLI_ROOT, `.tmp-${fp}-${process.pid}`);
  rmSync(tmp, { recursive: true, force: true });
  mkdirSync(tmp, { recursive: true });
  // ESM bundles that include CommonJS packages need a require()
  const banner = { js: "import { createRequire as __cr } from 'node:module'; const require = __cr(import.meta.url);" };
  const common = { bundle: true, platform: 'node', format: 'esm', target: ['node20'], logLevel: 'silent', banner, external: ['sharp', 'esbuild', 'electron'] };
  await esbuild.build({ ...common, entryPoints: [path.join(ROOT, 'core', 'cli', 'main.ts')], outfile: path.join(tmp, 'skyloupe.mjs') });
  // the worker pool and the raw decoder look for their workers beside the module that starts them
  await esbuild.build({ ...common, entryPoints: [path.join(ROOT, 'core', 'pool-worker.ts')], outfile: path.join(tmp, 'pool-worker.js') });
  copyFileSync(path.join(ROOT, 'core', 'frame', 'raw-worker.mjs'), path.join(tmp, 'raw-worker.mjs'));
  writeFileSync(path.join(tmp, 'package.json'), JSON.stringify({ type: 'module' }) + '\n');
  try {
    renameSync(tmp, path.dirname(entry));
  } catch {
    rmSync(tmp, { recursive: true, force: true }); // another command built the same sources first
  }
  prune(fp);
  return entry;
}

/** Removes builds of older sources that nothing has started for a while. */
function prune(keep) {
  const now = Date.now();
  for (const e of readdirSync(CLI_ROOT, { withFileTypes: true })) {
    if (!e.isDirectory() || e.name === keep) continue;
    const p = path.join(CLI_ROOT, e.name);
    try { if (now - statSync(p).mtimeMs > 3600_000) rmSync(p, { recursive: true, force: true }); } catch { /* in use or gone */ }
  }
}

if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  ensureCli().then((entry) => process.stdout.write(`${path.relative(ROOT, entry)}\n`), (err) => {
    // not fatal: the command then runs from the TypeScript sources
    process.stderr.write(`cli-bundle: ${err instanceof Error ? err.message : String(err)} (the command will run from sources)\n`);
  });
}
