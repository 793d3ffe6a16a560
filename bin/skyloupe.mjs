#!/usr/bin/env node
// The skyloupe command: loads the TypeScript CLI through tsx's loader.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../core/cli/main.ts');
process.exitCode = await main(process.argv.slice(2));
