/**
 * Running Debian's source-extractor (SExtractor 2.25, Bertin & Arnouts 1996) on a FITS file and
 * reading its catalogue, for the cross-checks and the bench. Its coordinates are 1-based (first
 * pixel centre at 1.0, SExtractor manual), converted here to ours (0-based). HFD = 2 x FLUX_RADIUS
 * at PHOT_FLUXFRAC 0.5 (the half-light radius); ELLIPTICITY = 1 - B/A and THETA_IMAGE (degrees
 * from +x toward +y) from the isophotal second moments; FWHM_IMAGE from the isophotal area
 * assuming a Gaussian core (SExtractor manual).
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';

export interface SexStar {
  x: number; y: number; flux: number; snr: number; fwhmPx: number; hfdPx: number;
  ellipticity: number; elongation: number; thetaDeg: number; flags: number; fluxMax: number;
}

const SHARE = '/usr/share/source-extractor';
const PARAMS = ['NUMBER', 'X_IMAGE', 'Y_IMAGE', 'FLUX_AUTO', 'FLUXERR_AUTO', 'FLUX_RADIUS', 'FWHM_IMAGE', 'ELLIPTICITY', 'ELONGATION', 'THETA_IMAGE', 'FLAGS', 'FLUX_MAX'];

/** Fails loudly when the Debian package is missing (CI installs it). */
export function requireSextractor(): string {
  const r = spawnSync('source-extractor', ['-v'], { encoding: 'utf8' });
  if (r.error || !/version/i.test(r.stdout + r.stderr)) throw new Error('source-extractor is missing: apt-get install -y source-extractor (CI installs it)');
  return (r.stdout + r.stderr).trim().split('\n')[0];
}

export interface SexOptions {
  threshold?: number; minArea?: number; backSize?: number; saturation?: number; threads?: number;
  /** Convolution mask file (default: default.conv, the 3x3 "all-ground" pyramid). */
  filter?: string;
}

/** Runs source-extractor on `fits` and returns its catalogue and the wall time. */
export function runSextractor(fits: string, o: SexOptions = {}): { stars: SexStar[]; seconds: number } {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-sex-'));
  try {
    const param = path.join(dir, 'p.param');
    const cat = path.join(dir, 'out.cat');
    writeFileSync(param, PARAMS.join('\n') + '\n');
    const args = [fits, '-c', `${SHARE}/default.sex`, '-CATALOG_NAME', cat, '-CATALOG_TYPE', 'ASCII_HEAD',
      '-PARAMETERS_NAME', param, '-FILTER_NAME', o.filter ?? `${SHARE}/default.conv`, '-STARNNW_NAME', `${SHARE}/default.nnw`,
      '-DETECT_THRESH', String(o.threshold ?? 3), '-ANALYSIS_THRESH', String(o.threshold ?? 3),
      '-DETECT_MINAREA', String(o.minArea ?? 5), '-BACK_SIZE', String(o.backSize ?? 64),
      '-SATUR_LEVEL', String(o.saturation ?? 65000), '-PHOT_FLUXFRAC', '0.5', '-CHECKIMAGE_TYPE', 'NONE',
      '-VERBOSE_TYPE', 'QUIET', '-NTHREADS', String(o.threads ?? 0)];
    const t0 = performance.now();
    const r = spawnSync('source-extractor', args, { encoding: 'utf8', maxBuffer: 1 << 26 });
    const seconds = (performance.now() - t0) / 1000;
    if (r.status !== 0) throw new Error(`source-extractor failed (${r.status}): ${r.stderr}`);
    const cols: string[] = [];
    const stars: SexStar[] = [];
    for (const line of readFileSync(cat, 'utf8').split('\n')) {
      if (line.startsWith('#')) { cols.push(line.split(/\s+/)[2]); continue; }
      if (!line.trim()) continue;
      const v = line.trim().split(/\s+/).map(Number);
      const g = (k: string) => v[cols.indexOf(k)];
      stars.push({
        x: g('X_IMAGE') - 1, y: g('Y_IMAGE') - 1, flux: g('FLUX_AUTO'), snr: g('FLUX_AUTO') / g('FLUXERR_AUTO'),
        fwhmPx: g('FWHM_IMAGE'), hfdPx: 2 * g('FLUX_RADIUS'), ellipticity: g('ELLIPTICITY'), elongation: g('ELONGATION'),
        thetaDeg: g('THETA_IMAGE'), flags: g('FLAGS'), fluxMax: g('FLUX_MAX'),
      });
    }
    return { stars, seconds };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** Nearest-neighbour matching within `radius` px, one-to-one (greedy by distance), on a grid. */
export function matchStars<A extends { x: number; y: number }, B extends { x: number; y: number }>(a: A[], b: B[], radius: number): [A, B][] {
  const cell = Math.max(1, radius);
  const grid = new Map<string, number[]>();
  b.forEach((s, j) => {
    const k = `${Math.floor(s.x / cell)},${Math.floor(s.y / cell)}`;
    (grid.get(k) ?? grid.set(k, []).get(k)!).push(j);
  });
  const pairs: { i: number; j: number; d: number }[] = [];
  a.forEach((s, i) => {
    const cx = Math.floor(s.x / cell), cy = Math.floor(s.y / cell);
    for (let dx = -1; dx <= 1; dx++) for (let dy = -1; dy <= 1; dy++) {
      for (const j of grid.get(`${cx + dx},${cy + dy}`) ?? []) {
        const d = Math.hypot(b[j].x - s.x, b[j].y - s.y);
        if (d <= radius) pairs.push({ i, j, d });
      }
    }
  });
  pairs.sort((p, q) => p.d - q.d);
  const ua = new Set<number>(), ub = new Set<number>();
  const out: [A, B][] = [];
  for (const p of pairs) {
    if (ua.has(p.i) || ub.has(p.j)) continue;
    ua.add(p.i); ub.add(p.j);
    out.push([a[p.i], b[p.j]]);
  }
  return out;
}

export function median(a: number[]): number {
  const s = a.filter(Number.isFinite).sort((x, y) => x - y);
  if (!s.length) return NaN;
  return s.length % 2 ? s[s.length >> 1] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
}
