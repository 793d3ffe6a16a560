import { parseArgs, type ParseArgsConfig } from 'node:util';
import { usage } from '../errors.ts';

type Options = NonNullable<ParseArgsConfig['options']>;

/** node:util parseArgs with our error wording: a bad option is a usage error (exit 2). */
export function parse(argv: string[], options: Options, command: string): { values: Record<string, string | boolean | undefined>; positionals: string[] } {
  try {
    return parseArgs({ args: argv, options: { help: { type: 'boolean', short: 'h' }, ...options }, allowPositionals: true, strict: true }) as { values: Record<string, string | boolean | undefined>; positionals: string[] };
  } catch (err) {
    const msg = err instanceof Error ? err.message.split('\n')[0] : String(err);
    throw usage(`${command}: ${msg.replace(/^TypeError \[[A-Z_]+\]: /, '')} (see skyloupe ${command} --help)`);
  }
}

/** A positive finite number option, or undefined. */
export function positiveNumber(value: unknown, name: string, command: string): number | undefined {
  if (value === undefined) return undefined;
  const v = Number(value);
  if (typeof value !== 'string' || value.trim() === '' || !Number.isFinite(v) || v <= 0) {
    throw usage(`${command}: --${name} needs a positive number, got "${String(value)}"`);
  }
  return v;
}
