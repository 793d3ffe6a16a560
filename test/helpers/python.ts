// Finds Debian's python3 with astropy (a pyenv python on PATH usually lacks it); null when missing.
import { spawnSync } from 'node:child_process';

let cached: string | null | undefined;

export function astropyPython(): string | null {
  if (cached !== undefined) return cached;
  cached = null;
  for (const py of ['/usr/bin/python3', 'python3']) {
    const r = spawnSync(py, ['-c', 'import astropy, numpy'], { encoding: 'utf8' });
    if (r.status === 0) { cached = py; break; }
  }
  return cached;
}

export function runPython(py: string, script: string, args: string[], timeoutMs = 120_000): string {
  const r = spawnSync(py, [script, ...args], { encoding: 'utf8', timeout: timeoutMs, maxBuffer: 64 * 1024 * 1024 });
  if (r.status !== 0) throw new Error(`${script} failed (${r.status}): ${r.stderr || r.error}`);
  return r.stdout;
}
