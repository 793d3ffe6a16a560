#!/usr/bin/env node
// The skyloupe command: loads the TypeScript CLI through tsx's loader.
import { register } from 'tsx/esm/api';

register();
const argv = process.argv.slice(2);
if (argv[0] === 'serve') {
  // browser mode of the desktop program (app/serve); core/ never imports app/
  const { serveMain } = await import('../app/serve/main.ts');
  process.exitCode = await serveMain(argv.slice(1));
} else {
  const { main } = await import('../core/cli/main.ts');
  process.exitCode = await main(argv);
}
