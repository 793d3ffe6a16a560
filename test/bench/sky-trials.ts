// npm run bench:sky-trials: false-positive trials at length. Frames of random (non-sky) dots,
// searched at every scale (no hint), must never be placed on the sky; prints how many were and the
// summed bound on the chance of it (placements tried / T, core/sky/verify.ts), and the time per frame.
import { randomDots } from '../../core/simulate/sky-field.ts';
import { solveSky } from '../../core/sky/solve.ts';
import { bundledCatalogue } from '../../core/sky/bundled.ts';

const N = Number(process.env.TRIALS ?? 200);
bundledCatalogue();
let placed = 0, bound = 0, tried = 0;
const times: number[] = [];
for (let s = 1; s <= N; s++) {
  const W = 3000 + (s % 5) * 600, H = 2000 + (s % 3) * 500;
  const dots = randomDots(40 + (s % 9) * 35, W, H, 90000 + s).map((d) => ({ x: d.x, y: d.y, flux: d.fluxE, errPx: 0.3, fwhmPx: 3 }));
  const t = performance.now();
  const r = solveSky(dots, { width: W, height: H, scaleHintArcsecPerPx: null });
  times.push((performance.now() - t) / 1000);
  if (r.solved) placed++;
  bound += r.search.falsePositiveBound;
  tried += r.search.placementsTried;
  if (s % 25 === 0) process.stdout.write(`  ${s} frames: ${placed} placed\n`);
}
times.sort((a, b) => a - b);
process.stdout.write(`blind false-positive trials: ${placed} of ${N} random-dot frames placed; ${tried} placements verified in all, summed bound ${bound.toExponential(2)}; `
  + `median ${times[(N - 1) >> 1].toFixed(2)} s per frame (max ${times[N - 1].toFixed(2)} s)\n`);
