import { it } from 'vitest';
import { focusPair } from '/work/wt/series/core/series/focus-pair.ts';
import { fromAnalysis } from '/work/wt/series/core/series/input.ts';
import { runThroughFocus } from '/work/wt/series/core/series/through-focus.ts';
import { optics, synthStars, type Scene } from '/work/wt/series/test/unit/diagnose-synth.ts';
import { renderSeries, seriesTruth } from '/work/wt/series/test/reference/recovery-focus-series.ts';
const W = 1500, H = 1000, P = 2.4;
const base: Omit<Scene, 'seed'> = { width: W, height: H, nStars: 500, seeingFwhmPx: 2.5, fNumber: 4, pixelSizeUm: P };
const opt = optics({ fNumber: 4, pixelSizeUm: P, focalLengthMm: 400 });
const frame = (s: Partial<Scene>, seed: number) => ({ stars: synthStars({ ...base, ...s, seed }), width: W, height: H, optics: opt });
const brief = (r: ReturnType<typeof focusPair>) => `tilt ${r.tilt.acrossFrameUm.x.toFixed(1)}±${r.tilt.acrossFrameErrUm.x.toFixed(1)} / ${r.tilt.acrossFrameUm.y.toFixed(1)}±${r.tilt.acrossFrameErrUm.y.toFixed(1)} curv ${r.curvature.cornerUm.toFixed(1)}±${r.curvature.cornerErrUm.toFixed(1)} ast ${r.astigmatism.magnitudeUm.toFixed(1)}±${r.astigmatism.magnitudeErrUm.toFixed(1)} chk ${r.modelCheck.chi2.toFixed(0)}/${r.modelCheck.zones} sign ${r.signSignificance.toFixed(0)} beta ${r.moffatBeta}`;
it('synth', () => {
  for (const [ux, uy, extra] of [[25, 0, {}], [-18, 12, {}], [24, 14, { curvatureUm: 10, astigUm: 15 }]] as const) {
    const tilt = { x: ux / ((W * P) / 1000), y: uy / ((H * P) / 1000) };
    for (const astigmatism of [true, false]) {
      const r = focusPair(frame({ tiltUmPerMm: tilt, defocusUm: 0, ...extra }, 111), frame({ tiltUmPerMm: tilt, defocusUm: 30, ...extra }, 112), 30, { astigmatism });
      console.log(`synth truth ${-ux}/${-uy} ${JSON.stringify(extra)} astig ${astigmatism}: ${brief(r)}`);
    }
  }
});
it('rendered', async () => {
  const scenes = [
    { seed: 31, focusUm: 15, aberrations: { tiltXUmAcross: 24, tiltYUmAcross: -14, curvatureRadiusMm: 120, astigmatismUmPerMm2: 3 } },
    { seed: 36, focusUm: 10, aberrations: { tiltXUmAcross: 22, tiltYUmAcross: -12 } },
  ];
  for (const s of scenes) {
    const ss = { width: 1200, height: 800, stars: 400, ...s };
    const frames = await renderSeries(ss, [-60, -30, 0, 30, 60].map((o) => s.focusUm + o));
    const tf = runThroughFocus(frames.map((f) => ({ positionUm: f.positionUm, analysis: f.analysis, profiles: f.extras.profiles, stamps: f.extras.stamps })));
    const truth = seriesTruth(ss, frames[0]);
    console.log(`rendered truth ${truth.acrossX}/${truth.acrossY} corner ${truth.cornerUm.toFixed(1)} ST ${truth.separationUm.toFixed(1)}; TF tilt ${tf.tilt!.acrossFrameUm.x.toFixed(1)}±${tf.tilt!.acrossFrameErrUm.x.toFixed(1)} / ${tf.tilt!.acrossFrameUm.y.toFixed(1)}±${tf.tilt!.acrossFrameErrUm.y.toFixed(1)} curv ${tf.curvature?.cornerUm.toFixed(1)}`);
    for (const [i, j] of [[2, 3], [1, 3], [2, 4], [0, 2]]) for (const astigmatism of [true, false]) {
      const r = focusPair(fromAnalysis(frames[i].analysis), fromAnalysis(frames[j].analysis), frames[j].positionUm - frames[i].positionUm, { astigmatism });
      console.log(`  pair ${i}-${j} astig ${astigmatism}: ${brief(r)}`);
    }
  }
}, 600_000);
