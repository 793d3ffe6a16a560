// One analysis of one frame in its own process, as the CLI runs it; prints one JSON line with the
// stage times (the plate-solving step is `astrometry`) and the outcome of the solve.
import { readFrame } from '../../core/frame/read.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { startPool } from '../../core/kernels.ts';

const file = process.argv[2];
const t0 = performance.now();
const pool = await startPool();
const frame = await readFrame(file);
const a = await analyzeFrame(frame, { pool });
void pool.close();
const s = a.astrometry!;
process.stdout.write(JSON.stringify({
  ...a.timings,
  total: (performance.now() - t0) / 1000,
  solved: s.solved, mode: s.search.mode, matched: s.starsMatched, placementsTried: s.search.placementsTried,
  focalLengthMm: s.focalLengthMm, pattern: s.distortion?.pattern ?? null, cornerPercent: s.distortion?.cornerPercent ?? null,
}) + '\n');
