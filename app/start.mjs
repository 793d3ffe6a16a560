#!/usr/bin/env node
// npm start: the desktop program on the demo frame, or browser mode where the Electron binary is missing.
import { spawn } from 'node:child_process';
import path from 'node:path';
import { register } from 'tsx/esm/api';

register();
const { findElectron } = await import('./electron-path.ts');
const extra = process.argv.slice(2);
const electron = findElectron();

if (electron.found) {
  const { buildAll, DIST } = await import('./build.ts');
  await buildAll();
  const child = spawn(electron.binary, [path.join(DIST, 'main.cjs'), '--demo', ...extra], { stdio: 'inherit' });
  child.on('exit', (code, signal) => { process.exitCode = code ?? (signal ? 1 : 0); });
} else {
  process.stdout.write(`skyloupe: no Electron window here (${electron.why}); starting browser mode instead, open this address in a web browser:\n`);
  const { serveMain } = await import('./serve/main.ts');
  process.exitCode = await serveMain(['--demo', ...extra]);
}
