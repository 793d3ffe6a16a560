#!/usr/bin/env node
// The skyloupe command: the prebuilt bundle (bin/cli-bundle.mjs) when it is current,
// else the TypeScript sources through tsx's loader.
import { pathToFileURL } from 'node:url';
import { ensureCli } from './cli-bundle.mjs';

const argv = process.argv.slice(2);

async function fromSources() {
  const { register } = await import('tsx/esm/api');
  register();
  return import('../core/cli/main.ts');
}

async function cli() {
  if (process.env.SKYLOUPE_FROM_SOURCES !== '1') {
    try {
      return await import(pathToFileURL(await ensureCli()).href);
    } catch {
      // no esbuild, a read-only checkout, or a failed build: the sources still run
    }
  }
  return fromSources();
}

if (argv[0] === 'serve') {
  // browser mode of the desktop program (app/serve); core/ never imports app/
  const { register } = await import('tsx/esm/api');
  register();
  const { serveMain } = await import('../app/serve/main.ts');
  process.exitCode = await serveMain(argv.slice(1));
} else {
  const { main } = await cli();
  process.exitCode = await main(argv);
}
