// One end-to-end run on one frame, in its own process so its peak memory is its own.
// Prints one JSON line: per-stage seconds and the peak resident set size.
import { readFrame } from '../../core/frame/read.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { buildReport } from '../../core/report/build.ts';
import { diagnose } from '../../core/diagnose/index.ts';
import { startPool } from '../../core/kernels.ts';

const file = process.argv[2];
const t0 = performance.now();
// as the CLI does: the worker threads start while the frame is read
const pool = await startPool();
const frame = await readFrame(file);
const tRead = (performance.now() - t0) / 1000;
const analysis = await analyzeFrame(frame, { pool });
void pool.close();
const t1 = performance.now();
const report = buildReport(analysis, file);
const json = JSON.stringify(report);
const tReport = (performance.now() - t1) / 1000;
const total = (performance.now() - t0) / 1000;
// the diagnosis (field map and faults) comes on top of the measurement
const t2 = performance.now();
const d = diagnose(analysis.stars, { width: analysis.frame.width, height: analysis.frame.height, optics: analysis.optics });
const tDiagnose = (performance.now() - t2) / 1000;
void d;
process.stdout.write(JSON.stringify({
  read: tRead,
  ...analysis.timings,
  report: tReport,
  total,
  diagnose: tDiagnose,
  stars: report.detection.measured,
  usable: report.detection.usedForField,
  jsonBytes: json.length,
  peakRssMB: process.resourceUsage().maxRSS / 1024,
}) + '\n');
