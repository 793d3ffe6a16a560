/**
 * The Sky figure's marks (core/report/svg/sky.ts) on a report written here: saturated stars get
 * their own marker and count, the data region is drawn as given (a circle at its centre and
 * radius; a mask's cells without sky shaded, whose area is counted here from the cells), and
 * catalogue labels go to the brightest matched stars first.
 */
import { describe, expect, it } from 'vitest';
import { DAY, NIGHT, skySvg, labelledMatches } from '../../core/report/svg/index.ts';
import type { Report } from '../../core/report/types.ts';

const W = 400, H = 300;

function star(x: number, y: number, flags: string[] = [], snr = 50) {
  return { x, y, fwhmPx: 2.5, snr, flags };
}

function report(over: Record<string, unknown> = {}): Report {
  return {
    frame: {
      width: W, height: H, path: 'made-here.fits', display: { topRow: 'first', note: '' }, optics: { plateScaleArcsecPerPx: null },
      dataRegion: { kind: 'full', circle: null, mask: null, skyFraction: 1, blackLevel: null, vignetting: null, note: '' },
    },
    stars: [star(50, 50), star(100, 80), star(200, 150, ['saturated'], 900), star(300, 200, ['saturated', 'blended'], 800), star(20, 290, ['low-snr'], 4)],
    astrometry: null,
    ...over,
  } as unknown as Report;
}

const attr = (svg: string, name: string) => new RegExp(`${name}="([^"]*)"`).exec(svg)?.[1];

describe('sky marks', () => {
  it('saturated stars are counted and drawn apart from the other set-aside stars', () => {
    const svg = skySvg(report(), { theme: DAY, width: 800 });
    expect(attr(svg, 'data-clean-marked')).toBe('2');
    expect(attr(svg, 'data-saturated-marked')).toBe('2');
    expect(attr(svg, 'data-flagged-marked')).toBe('1');
    expect((svg.match(/class="star saturated"/g) ?? []).length).toBe(2);
    expect(svg).toContain(`stroke="${DAY.bad}"`);
    // the key under the frame names the mark, with the count
    expect(svg).toMatch(/<g class="key-entry" data-mark="saturated">.*?>saturated \(2\)<\/text><\/g>/);
    // night: the saturated marks take the night theme's colour (red only is the theme's rule)
    expect(skySvg(report(), { theme: NIGHT, width: 800 })).toMatch(new RegExp(`<g class="saturated-mark" fill="none" stroke="${NIGHT.bad}"`));
  });

  it('an image circle is drawn at its centre and radius (frame pixels, centres at +0.5)', () => {
    const svg = skySvg(report({}), { theme: DAY });
    expect(svg).not.toContain('data-region"');
    const r = report();
    (r.frame as { dataRegion: unknown }).dataRegion = { kind: 'circle', circle: { xPx: 201.5, yPx: 148, radiusPx: 170 }, mask: null, skyFraction: 0.7, blackLevel: 10, vignetting: null, note: '' };
    const c = /<circle class="data-region" data-kind="circle" cx="([\d.]+)" cy="([\d.]+)" r="([\d.]+)"/.exec(skySvg(r, { theme: DAY }))!;
    expect(c.slice(1).map(Number)).toEqual([202, 148.5, 170]);
    expect(skySvg(r, { theme: DAY })).toContain('data-mark="region-circle"');
    // shown with the last stored row on top, the circle's row is mirrored: y' = H - 0.5 - y
    (r.frame as { display: unknown }).display = { topRow: 'last', note: '' };
    const f = /<circle class="data-region" data-kind="circle" cx="([\d.]+)" cy="([\d.]+)"/.exec(skySvg(r, { theme: DAY }))!;
    expect(Number(f[2])).toBe(H - 0.5 - 148);
  });

  it('a mask shades exactly its cells without sky', () => {
    const r = report();
    // 4 x 3 cells of 100 px; the left column and one more cell hold no sky
    const cells = '011101110111'.split('');
    cells[6] = '0';
    (r.frame as { dataRegion: unknown }).dataRegion = { kind: 'mask', circle: null, mask: { cellPx: 100, cols: 4, rows: 3, cells: cells.join('') }, skyFraction: 8 / 12, blackLevel: 10, vignetting: null, note: '' };
    const d = /<path class="data-region" data-kind="mask" d="([^"]+)"/.exec(skySvg(r, { theme: DAY }))![1];
    const rects = [...d.matchAll(/M([\d.]+),([\d.]+)H([\d.]+)V([\d.]+)H/g)].map((m) => m.slice(1).map(Number));
    expect(rects.length).toBe(cells.filter((c) => c === '0').length);
    const area = rects.reduce((s, [x0, y0, x1, y1]) => s + (x1 - x0) * (y1 - y0), 0);
    expect(area).toBe(4 * 100 * 100);
  });

  it('labels go to matched stars, brightest first, up to the limit; none when not placed', () => {
    const matches = [
      { star: 0, catalogueId: 'HIP 2', name: null, magnitude: 6.1 },
      { star: 1, catalogueId: 'HIP 1', name: 'Bright One', magnitude: 2.0 },
      { star: 2, catalogueId: 'HIP 3', name: null, magnitude: null },
    ];
    const r = report({ astrometry: { solved: true, matches } });
    expect(labelledMatches(r, 2)).toEqual([{ star: 1, text: 'Bright One (HIP 1)' }, { star: 0, text: 'HIP 2' }]);
    const svg = skySvg(r, { theme: DAY, labels: true });
    expect(attr(svg, 'data-labels')).toBe('3');
    expect(svg).toContain('>Bright One (HIP 1)</text>');
    expect(svg).toContain('data-mark="label"');
    expect(attr(skySvg(r, { theme: DAY }), 'data-labels')).toBe('0');
    expect(skySvg(r, { theme: DAY })).not.toContain('data-mark="label"');
    expect(labelledMatches(report({ astrometry: { solved: false, matches: [] } }), 10)).toEqual([]);
  });
});
