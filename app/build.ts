/**
 * Bundles the program with esbuild: the page (renderer) for both modes, and for the desktop
 * program the main process, the preload script and the analysis worker. Browser mode bundles
 * the page in memory at start-up; `npm run build:app` writes everything to dist/app/.
 */
import { copyFile, readFile, mkdir, writeFile } from 'node:fs/promises';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const APP = path.dirname(fileURLToPath(import.meta.url));
export const ROOT = path.resolve(APP, '..');
export const DIST = path.join(ROOT, 'dist', 'app');

export interface PageAssets { js: string; css: string }

type Esbuild = typeof import('esbuild');

async function esbuild(): Promise<Esbuild | null> {
  try {
    return await import('esbuild');
  } catch {
    return null;
  }
}

/** The page's script and style: bundled now when esbuild is installed, else the prebuilt copy. */
export async function pageAssets(): Promise<PageAssets> {
  const css = await readFile(path.join(APP, 'renderer', 'style.css'), 'utf8');
  const eb = await esbuild();
  if (eb) {
    const r = await eb.build({
      entryPoints: [path.join(APP, 'renderer', 'main.ts')],
      bundle: true, write: false, format: 'iife', platform: 'browser', target: ['chrome120'],
      minify: true, sourcemap: false, legalComments: 'none', logLevel: 'silent',
    });
    return { js: r.outputFiles[0].text, css };
  }
  const prebuilt = path.join(DIST, 'renderer', 'app.js');
  if (!existsSync(prebuilt)) throw new Error('the page is not built: run npm run build:app (needs the esbuild dev dependency)');
  return { js: await readFile(prebuilt, 'utf8'), css };
}

/** Everything the desktop program needs, into dist/app/. */
export async function buildAll(): Promise<string[]> {
  const eb = await esbuild();
  if (!eb) throw new Error('esbuild is not installed (npm ci installs it)');
  await mkdir(path.join(DIST, 'renderer'), { recursive: true });
  const page = await pageAssets();
  await writeFile(path.join(DIST, 'renderer', 'app.js'), page.js);
  await writeFile(path.join(DIST, 'renderer', 'app.css'), page.css);
  // ESM bundles that include CommonJS packages need a require()
  const esmBanner = { js: "import { createRequire as __cr } from 'node:module'; const require = __cr(import.meta.url);" };
  const common = { bundle: true, platform: 'node' as const, target: ['node20'], logLevel: 'warning' as const, external: ['electron', 'sharp', 'esbuild'] };
  await eb.build({ ...common, entryPoints: [path.join(APP, 'main', 'main.ts')], outfile: path.join(DIST, 'main.cjs'), format: 'cjs' });
  await eb.build({ ...common, entryPoints: [path.join(APP, 'preload', 'preload.ts')], outfile: path.join(DIST, 'preload.cjs'), format: 'cjs' });
  await eb.build({ ...common, entryPoints: [path.join(APP, 'engine', 'worker.ts')], outfile: path.join(DIST, 'analysis-worker.mjs'), format: 'esm', banner: esmBanner });
  // the worker pool (core/parallel) looks for pool-worker.js beside the module that starts it (the bundle)
  await eb.build({ ...common, entryPoints: [path.join(ROOT, 'core', 'pool-worker.ts')], outfile: path.join(DIST, 'pool-worker.js'), format: 'esm', banner: esmBanner });
  // and the raw decoder for its worker (plain JavaScript, loading libraw-wasm from node_modules)
  await copyFile(path.join(ROOT, 'core', 'frame', 'raw-worker.mjs'), path.join(DIST, 'raw-worker.mjs'));
  await writeFile(path.join(DIST, 'package.json'), JSON.stringify({ type: 'module' }) + '\n');
  return ['renderer/app.js', 'renderer/app.css', 'main.cjs', 'preload.cjs', 'analysis-worker.mjs', 'pool-worker.js', 'raw-worker.mjs'].map((f) => path.join(DIST, f));
}

if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  buildAll().then((files) => { for (const f of files) process.stdout.write(path.relative(ROOT, f) + '\n'); }, (err) => {
    process.stderr.write(`build:app: ${err instanceof Error ? err.message : String(err)}\n`);
    process.exitCode = 1;
  });
}
