/**
 * The page: drop or open a frame, follow the progress, read the views and the findings.
 * It reaches the engine only through the bridge (window.skyloupe in the desktop program,
 * HTTP with the run's token in browser mode) and draws every figure with core/report/svg.
 */
import { select } from 'd3-selection';
import { zoom, zoomIdentity, type ZoomBehavior, type ZoomTransform } from 'd3-zoom';
import {
  DAY, NIGHT, type Theme, skySvg, shapeSvg, sizeSvg, focusSvg, cornersSvg, stampSvg, findingsHtml, findingsSvg,
  summaryHtml, compareTableHtml, sweepSvg, heatGrid, finiteRange, type SizeQuantity, diagnosisOf, esc, num,
} from '../../core/report/svg/index.ts';
import type {
  AnalysisResult, CompareResult, FrameFile, MenuCommand, OpticsInput, Outcome, Progress, SkyloupeBridge, SweepResult,
} from '../preload/bridge.ts';
import { httpBridge } from './http-bridge.ts';
import { $, h, setMarkup } from './dom.ts';
import { viewPng } from './png.ts';
import { spacingFromName } from './names.ts';

declare global {
  interface Window { skyloupe?: SkyloupeBridge }
}

type ViewName = 'sky' | 'shape' | 'size' | 'focus' | 'corners' | 'findings' | 'compare' | 'sweep';

const VIEWS: { name: ViewName; label: string; key: string }[] = [
  { name: 'sky', label: 'Sky', key: '1' },
  { name: 'shape', label: 'Shape map', key: '2' },
  { name: 'size', label: 'Size map', key: '3' },
  { name: 'focus', label: 'Focus plane', key: '4' },
  { name: 'corners', label: 'Corners', key: '5' },
  { name: 'findings', label: 'Findings', key: '6' },
  { name: 'compare', label: 'Compare', key: '7' },
  { name: 'sweep', label: 'Spacer sweep', key: '8' },
];

const STAGE_WORDS: Record<string, string> = {
  read: 'Reading the frame', background: 'Modelling the sky background', detect: 'Finding stars',
  measure: 'Measuring star shapes', field: 'Mapping the field', images: 'Drawing the previews', done: 'Done',
};

const ACCEPT = '.fits,.fit,.fts,.fits.fz,.tif,.tiff,.png,.jpg,.jpeg';

interface SweepRow { result: AnalysisResult; spacingMm: number | null }

const state = {
  bridge: null as unknown as SkyloupeBridge,
  current: null as AnalysisResult | null,
  /** What the current result was made from, to analyse it again with entered optics. */
  source: null as { kind: 'file'; file: FrameFile } | { kind: 'demo' } | null,
  view: 'sky' as ViewName,
  night: false,
  sizeQuantity: 'fwhmPx' as SizeQuantity,
  shapeMode: 'zones' as 'zones' | 'stars',
  selected: null as number | null,
  /** Star indices in falling SNR, for keyboard stepping. */
  order: [] as number[],
  busy: false,
  zoomT: zoomIdentity as ZoomTransform,
  zoomer: null as ZoomBehavior<SVGSVGElement, unknown> | null,
  compare: { a: null as AnalysisResult | null, b: null as AnalysisResult | null, result: null as CompareResult | null },
  sweep: { rows: [] as SweepRow[], result: null as SweepResult | null },
};

const theme = (): Theme => (state.night ? NIGHT : DAY);

// ---------- page skeleton ----------

function button(id: string, label: string, title: string, extra: Record<string, string | boolean> = {}): HTMLButtonElement {
  return h('button', { id, type: 'button', title, ...extra }, label);
}

function buildPage(): void {
  const tabs = VIEWS.map((v) => h('button', {
    id: `tab-${v.name}`, type: 'button', role: 'tab', 'data-view': v.name, 'aria-controls': 'view', 'aria-selected': v.name === state.view ? 'true' : 'false',
    tabindex: v.name === state.view ? '0' : '-1', title: `${v.label} (key ${v.key})`,
  }, h('span', { class: 'tab-key', 'aria-hidden': 'true' }, v.key), ` ${v.label}`));
  const app = h('div', { id: 'app', class: 'app' },
    h('header', { class: 'bar' },
      h('h1', { class: 'brand' }, 'skyloupe'),
      button('btn-open', 'Open frame…', 'Open a frame file (O)'),
      h('input', { id: 'file-input', type: 'file', accept: ACCEPT, hidden: true, 'aria-label': 'Frame file' }),
      button('btn-demo', 'Demo frame', 'Analyse the built-in demo frame (D)'),
      h('span', { id: 'file-name', class: 'file-name', 'aria-live': 'polite' }),
      h('span', { class: 'spacer' }),
      h('span', { class: 'group', role: 'group', 'aria-label': 'Export' },
        button('btn-export-html', 'Report', 'Save the HTML report (E)', { disabled: true }),
        button('btn-export-json', 'JSON', 'Save the JSON report', { disabled: true }),
        button('btn-export-csv', 'CSV', 'Save the star table as CSV', { disabled: true }),
        button('btn-export-png', 'PNG', 'Save this view as a PNG picture (P)', { disabled: true })),
      button('btn-night', 'Night', 'Red night mode for the telescope (N)', { 'aria-pressed': 'false' }),
      button('btn-help', 'Keys', 'Keyboard keys (?)')),
    h('div', { id: 'progress', class: 'progress', hidden: true, role: 'status', 'aria-live': 'polite' },
      h('span', { id: 'progress-label' }, ''),
      h('progress', { id: 'progress-bar', max: '1', value: '0' }),
      button('btn-cancel', 'Cancel', 'Stop the analysis (Esc)')),
    h('div', { id: 'message', class: 'message', role: 'alert', hidden: true }),
    h('form', { id: 'optics-form', class: 'optics-form', hidden: true, 'aria-label': 'Optics' },
      h('p', { id: 'optics-why' }),
      h('label', {}, 'Focal length ', h('input', { id: 'in-focal', name: 'focalLengthMm', type: 'number', step: 'any', min: '1', max: '100000', inputmode: 'decimal' }), ' mm'),
      h('label', {}, 'Pixel size ', h('input', { id: 'in-pixel', name: 'pixelSizeUm', type: 'number', step: 'any', min: '0.2', max: '100', inputmode: 'decimal' }), ' µm'),
      h('label', {}, 'f/', h('input', { id: 'in-fnum', name: 'fNumber', type: 'number', step: 'any', min: '0.5', max: '200', inputmode: 'decimal' })),
      h('button', { id: 'btn-optics', type: 'submit' }, 'Analyse again'),
      h('span', { id: 'optics-camera', class: 'muted' })),
    h('div', { class: 'body' },
      h('nav', { id: 'tabs', class: 'tabs', role: 'tablist', 'aria-label': 'Views', 'aria-orientation': 'vertical' }, ...tabs),
      h('main', { id: 'view', class: 'view', role: 'tabpanel', tabindex: '0', 'aria-live': 'polite' }),
      h('aside', { id: 'side', class: 'side' },
        h('section', { id: 'summary', class: 'summary-panel', 'aria-label': 'Summary' }),
        h('section', { id: 'star-panel', class: 'star-panel', 'aria-label': 'Selected star' }))),
    h('div', { id: 'drop-overlay', class: 'drop-overlay', hidden: true }, h('div', {}, 'Drop a frame to analyse it')),
    h('dialog', { id: 'help-dialog', 'aria-label': 'Keyboard keys' },
      h('h2', {}, 'Keys'),
      h('table', {}, h('tbody', {}, ...[
        ['1 – 8', 'switch view'], ['O', 'open a frame'], ['D', 'demo frame'], ['N', 'night mode'], ['E', 'save the HTML report'],
        ['P', 'save the view as PNG'], ['+  −  0', 'zoom in, out, reset (Sky)'], ['arrows', 'pan (Sky)'], ['[  ]', 'previous / next star (Sky)'],
        ['Esc', 'stop the analysis, close this'], ['?', 'this list'],
      ].map(([k, v]) => h('tr', {}, h('th', { scope: 'row' }, k), h('td', {}, v))))),
      h('form', { method: 'dialog' }, h('button', { type: 'submit', id: 'btn-help-close' }, 'Close'))),
  );
  document.body.append(app);
}

// ---------- messages and progress ----------

let messageTimer: ReturnType<typeof setTimeout> | undefined;

/** Errors stay until the next action; notes such as "Saved ..." go after a few seconds. */
function showMessage(text: string | null, kind: 'error' | 'info' = 'error'): void {
  const m = $('#message');
  clearTimeout(messageTimer);
  if (!text) { m.hidden = true; m.textContent = ''; return; }
  m.hidden = false;
  m.className = `message message-${kind}`;
  m.textContent = text;
  if (kind === 'info') messageTimer = setTimeout(() => showMessage(null), 6000);
}

function failureText(o: Extract<Outcome<unknown>, { ok: false }>): string {
  switch (o.kind) {
    case 'unreadable': return `This file cannot be read. ${o.message}. skyloupe reads FITS, TIFF, PNG and JPEG frames.`;
    case 'no-stars': return `No stars to measure. ${o.message}`;
    case 'cancelled': return 'Analysis stopped.';
    case 'usage': return o.message;
    case 'not-found': return o.message;
    default: return `Something went wrong: ${o.message}`;
  }
}

function setBusy(busy: boolean): void {
  state.busy = busy;
  const p = $('#progress');
  p.hidden = !busy;
  if (busy) { ($('#progress-bar') as HTMLProgressElement).value = 0; $('#progress-label').textContent = 'Starting…'; }
  document.body.classList.toggle('busy', busy);
}

function onProgress(p: Progress): void {
  ($('#progress-bar') as HTMLProgressElement).value = p.overall;
  $('#progress-label').textContent = `${STAGE_WORDS[p.stage] ?? p.stage}… ${Math.round(p.overall * 100)} %`;
}

// ---------- analysis ----------

async function analyse(source: { kind: 'file'; file: FrameFile } | { kind: 'demo' }, optics?: OpticsInput): Promise<AnalysisResult | null> {
  showMessage(null);
  setBusy(true);
  const t0 = performance.now();
  try {
    const o = source.kind === 'demo' ? await state.bridge.analyzeDemo(optics) : await state.bridge.analyze(source.file, optics);
    if (!o.ok) {
      showMessage(failureText(o), o.kind === 'cancelled' ? 'info' : 'error');
      return null;
    }
    document.body.dataset.lastAnalysisMs = String(Math.round(performance.now() - t0));
    return o.value;
  } finally {
    setBusy(false);
  }
}

async function openMain(source: { kind: 'file'; file: FrameFile } | { kind: 'demo' }, optics?: OpticsInput): Promise<void> {
  const r = await analyse(source, optics);
  if (!r) return;
  state.current = r;
  state.source = source;
  state.selected = null;
  state.zoomT = zoomIdentity;
  state.order = r.report.stars.map((_, i) => i).filter((i) => r.report.stars[i].flags.length === 0).sort((a, b) => r.report.stars[b].snr - r.report.stars[a].snr);
  if (!state.compare.a) state.compare.a = r;
  for (const id of ['btn-export-html', 'btn-export-json', 'btn-export-csv', 'btn-export-png']) ($(`#${id}`) as HTMLButtonElement).disabled = false;
  $('#file-name').textContent = `${r.name} · ${r.report.summary.stars} stars · ${(r.elapsedMs / 1000).toFixed(1)} s`;
  document.body.dataset.analysis = r.id;
  renderSummary();
  renderOptics();
  renderStar();
  // a frame without findings opens on the sky; with findings, first what to act on
  const major = (r.report.findings ?? []).some((f) => f.severity === 'major');
  switchView(major && state.view === 'sky' && diagnosisOf(r.report) ? 'findings' : state.view);
}

async function fileFrom(f: File): Promise<FrameFile> {
  return { name: f.name, bytes: await f.arrayBuffer() };
}

// ---------- side panels ----------

function renderSummary(): void {
  const r = state.current;
  const el = $('#summary');
  if (!r) { setMarkup(el, '<p class="muted">Drop a frame anywhere, or open one. The demo frame shows what skyloupe finds.</p>'); return; }
  const findings = r.report.findings;
  const counts = findings ? `${findings.length} finding${findings.length === 1 ? '' : 's'} (${findings.filter((f) => f.severity === 'major').length} to act on)` : 'no diagnosis';
  const from = r.opticsFrom === 'remembered' ? `<p class="muted">Optics remembered for “${esc(r.camera)}” were used.</p>` : '';
  setMarkup(el, `<h2>Summary</h2>${summaryHtml(r.report)}<p class="findings-count" data-count="${findings?.length ?? 0}">${counts}</p>${from}`);
}

function renderOptics(): void {
  const r = state.current;
  const form = $('#optics-form') as HTMLFormElement;
  if (!r || r.opticsMissing.length === 0) { form.hidden = true; return; }
  const words: Record<string, string> = { focalLengthMm: 'focal length', pixelSizeUm: 'pixel size', fNumber: 'f-number' };
  const missing = r.opticsMissing.map((k) => words[k]).join(', ');
  $('#optics-why').textContent = `Optics missing: ${missing}. Without focal length and pixel size sizes stay in pixels; without the f-number and pixel size focus errors cannot be given in micrometres. Enter them to analyse again.`;
  const o = r.report.frame.optics;
  ($('#in-focal') as HTMLInputElement).value = o.focalLengthMm ? String(o.focalLengthMm) : '';
  ($('#in-pixel') as HTMLInputElement).value = o.pixelSizeUm ? String(o.pixelSizeUm) : '';
  ($('#in-fnum') as HTMLInputElement).value = o.fNumber ? String(o.fNumber) : '';
  $('#optics-camera').textContent = `remembered for: ${r.camera}`;
  form.hidden = false;
}

async function renderStar(): Promise<void> {
  const el = $('#star-panel');
  const r = state.current;
  if (!r || state.selected === null) { setMarkup(el, r ? '<p class="muted">Click a star in the sky (or press ] ) for its numbers and its pixels.</p>' : ''); return; }
  const i = state.selected;
  const s = r.report.stars[i];
  const plate = r.report.frame.optics.plateScaleArcsecPerPx;
  const rows: [string, string][] = [
    ['Position', `${num(s.x, 1)}, ${num(s.y, 1)} px`],
    ['FWHM', `${num(s.fwhmPx)} ± ${num(s.err.fwhmPx)} px${plate ? ` · ${num(s.fwhmPx * plate)}″` : ''}`],
    ['Axes', `${num(s.fwhmMajorPx)} × ${num(s.fwhmMinorPx)} px`],
    ['Ellipticity', `${num(s.ellipticity, 3)} ± ${num(s.err.ellipticity, 3)}`],
    ['Long axis', `${num(s.thetaDeg, 1)}°`],
    ['HFD', `${num(s.hfdPx)} px`],
    ['SNR', num(s.snr, 0)],
    ['Model', s.model + (s.moffatBeta !== null ? ` (β ${num(s.moffatBeta)})` : '')],
    ['Flags', s.flags.length ? s.flags.join(', ') : 'none'],
  ];
  const table = '<table class="star-table"><tbody>' + rows.map(([k, v]) => `<tr><th scope="row">${k}</th><td>${esc(v)}</td></tr>`).join('') + '</tbody></table>';
  setMarkup(el, `<h2>Star ${i + 1}</h2>${table}<div id="stamp" class="stamp" aria-label="Pixels of the star">…</div>`);
  const st = await state.bridge.stamp(r.id, i);
  if (state.selected !== i) return;
  setMarkup($('#stamp'), st.ok ? stampSvg(st.value, { theme: theme(), size: 220 }) : `<p class="muted">${esc(st.message)}</p>`);
}

function selectStar(i: number | null): void {
  state.selected = i;
  const svg = document.querySelector('#view svg#sky-svg');
  if (svg) {
    svg.querySelector('circle.selected')?.remove();
    const r = state.current;
    if (r && i !== null) {
      const src = svg.querySelector(`circle[data-star="${i}"]`);
      if (src) {
        const c = document.createElementNS('http://www.w3.org/2000/svg', 'circle');
        c.setAttribute('class', 'selected');
        c.setAttribute('cx', src.getAttribute('cx') ?? '0');
        c.setAttribute('cy', src.getAttribute('cy') ?? '0');
        c.setAttribute('r', String(2 * Number(src.getAttribute('r') ?? 5)));
        c.setAttribute('fill', 'none');
        c.setAttribute('stroke', theme().selected);
        c.setAttribute('stroke-width', '2.5');
        c.setAttribute('vector-effect', 'non-scaling-stroke');
        svg.querySelector('g.zoom-layer')?.append(c);
      }
    }
  }
  void renderStar();
}

// ---------- views ----------

/**
 * Width of a figure in its own units: the view's width in rem x 16, so the figures' text
 * (11-14 units) grows with the page's font on large screens.
 */
function figureWidth(): number {
  const rem = parseFloat(getComputedStyle(document.documentElement).fontSize) || 16;
  const w = (($('#view').clientWidth - 24) * 16) / rem;
  return Math.max(520, Math.min(w, 2400));
}

function needFrame(el: HTMLElement): boolean {
  if (state.current) return true;
  setMarkup(el, '<div class="empty"><p>No frame yet.</p><p>Drop a frame anywhere on this window, open one, or try the demo frame.</p></div>');
  return false;
}

function toolbar(...items: HTMLElement[]): HTMLElement {
  return h('div', { class: 'toolbar', role: 'toolbar' }, ...items);
}

function radios(name: string, options: [string, string][], value: string, onChange: (v: string) => void): HTMLElement {
  const g = h('div', { class: 'radios', role: 'radiogroup', 'aria-label': name });
  for (const [v, label] of options) {
    const input = h('input', { type: 'radio', name, value: v, id: `${name}-${v}`, checked: v === value });
    input.addEventListener('change', () => onChange(v));
    g.append(h('label', { for: `${name}-${v}` }, input, ` ${label}`));
  }
  return g;
}

function renderSky(el: HTMLElement): void {
  if (!needFrame(el)) return;
  const r = state.current!;
  const w = figureWidth();
  const zoomIn = button('btn-zoom-in', '+', 'Zoom in (+)');
  const zoomOut = button('btn-zoom-out', '−', 'Zoom out (−)');
  const zoomReset = button('btn-zoom-reset', 'Fit', 'Whole frame (0)');
  const counts = r.report.stars.length;
  el.append(toolbar(zoomIn, zoomOut, zoomReset, h('span', { class: 'muted', id: 'sky-note' }, `${r.report.summary.stars} clean of ${counts} measured stars · click a star for its numbers · wheel or +/− to zoom, drag to pan`)));
  const holder = h('div', { class: 'figure sky-figure' });
  setMarkup(holder, skySvg(r.report, { theme: theme(), preview: r.preview, width: w }));
  el.append(holder);
  const svg = holder.querySelector('svg') as SVGSVGElement;
  svg.removeAttribute('height');
  svg.setAttribute('width', '100%');
  const layer = select(svg).select<SVGGElement>('g.zoom-layer');
  const z = zoom<SVGSVGElement, unknown>().scaleExtent([1, 64])
    .extent([[0, 0], [r.report.frame.width, r.report.frame.height]])
    .translateExtent([[0, 0], [r.report.frame.width, r.report.frame.height]])
    .on('zoom', (ev: { transform: ZoomTransform }) => { state.zoomT = ev.transform; layer.attr('transform', ev.transform.toString()); });
  select(svg).call(z).call(z.transform, state.zoomT);
  state.zoomer = z;
  zoomIn.addEventListener('click', () => zoomBy(2));
  zoomOut.addEventListener('click', () => zoomBy(0.5));
  zoomReset.addEventListener('click', () => zoomTo(zoomIdentity));
  svg.addEventListener('click', (ev) => {
    const pt = svg.createSVGPoint();
    pt.x = ev.clientX;
    pt.y = ev.clientY;
    const ctm = (svg.querySelector('g.zoom-layer') as SVGGElement).getScreenCTM();
    if (!ctm) return;
    const p = pt.matrixTransform(ctm.inverse());
    // nearest marked star within 12 screen px
    const tol = 12 / (ctm.a || 1);
    let best = -1;
    let bestD = tol;
    for (const c of svg.querySelectorAll<SVGCircleElement>('circle[data-star]')) {
      const d = Math.hypot(Number(c.getAttribute('cx')) - p.x, Number(c.getAttribute('cy')) - p.y);
      if (d < bestD) { bestD = d; best = Number(c.dataset.star); }
    }
    if (best >= 0) selectStar(best);
  });
  if (state.selected !== null) selectStar(state.selected);
}

function zoomBy(k: number): void {
  const svg = document.querySelector<SVGSVGElement>('#view svg#sky-svg');
  if (svg && state.zoomer) select(svg).call(state.zoomer.scaleBy, k);
}

function zoomTo(t: ZoomTransform): void {
  const svg = document.querySelector<SVGSVGElement>('#view svg#sky-svg');
  if (svg && state.zoomer) select(svg).call(state.zoomer.transform, t);
}

function panBy(dx: number, dy: number): void {
  const svg = document.querySelector<SVGSVGElement>('#view svg#sky-svg');
  if (svg && state.zoomer && state.current) {
    const step = state.current.report.frame.width / 10 / state.zoomT.k;
    select(svg).call(state.zoomer.translateBy, dx * step, dy * step);
  }
}

function fitFigure(holder: HTMLElement): void {
  for (const svg of holder.querySelectorAll('svg')) {
    svg.removeAttribute('height');
    svg.setAttribute('width', '100%');
  }
}

function renderShape(el: HTMLElement): void {
  if (!needFrame(el)) return;
  el.append(toolbar(radios('shape-mode', [['zones', 'per zone'], ['stars', 'per star']], state.shapeMode, (v) => { state.shapeMode = v as 'zones' | 'stars'; render(); })));
  const holder = h('div', { class: 'figure' });
  setMarkup(holder, shapeSvg(state.current!.report, { theme: theme(), width: figureWidth(), mode: state.shapeMode }));
  fitFigure(holder);
  el.append(holder);
}

function renderSize(el: HTMLElement): void {
  if (!needFrame(el)) return;
  el.append(toolbar(radios('size-q', [['fwhmPx', 'FWHM (px)'], ['fwhmArcsec', 'FWHM (arcsec)'], ['ellipticity', 'Ellipticity']], state.sizeQuantity, (v) => { state.sizeQuantity = v as SizeQuantity; render(); })));
  const holder = h('div', { class: 'figure' });
  setMarkup(holder, sizeSvg(state.current!.report, { theme: theme(), quantity: state.sizeQuantity, width: figureWidth() }));
  fitFigure(holder);
  el.append(holder);
}

function renderFocus(el: HTMLElement): void {
  if (!needFrame(el)) return;
  const holder = h('div', { class: 'figure' });
  setMarkup(holder, focusSvg(state.current!.report, { theme: theme(), width: figureWidth() }));
  fitFigure(holder);
  el.append(holder);
}

function renderCorners(el: HTMLElement): void {
  if (!needFrame(el)) return;
  const holder = h('div', { class: 'figure corners-figure' });
  const rem = parseFloat(getComputedStyle(document.documentElement).fontSize) || 16;
  setMarkup(holder, cornersSvg(state.current!.report, state.current!.tiles, { theme: theme(), width: figureWidth(), maxHeight: (($('#view').clientHeight - 24) * 16) / rem }));
  fitFigure(holder);
  el.append(holder);
}

function renderFindings(el: HTMLElement): void {
  if (!needFrame(el)) return;
  const r = state.current!;
  const holder = h('div', { class: 'findings-view' });
  setMarkup(holder, `<h2>Findings</h2>${findingsHtml(r.report.findings)}`);
  el.append(holder);
}

function slot(label: string, which: 'a' | 'b'): HTMLElement {
  const res = state.compare[which];
  const input = h('input', { type: 'file', accept: ACCEPT, id: `compare-${which}-input`, hidden: true, 'aria-label': `Frame ${label}` });
  const open = button(`btn-compare-${which}-open`, 'Open…', `Open frame ${label}`);
  const cur = button(`btn-compare-${which}-current`, 'Use current', `Use the current frame as ${label}`, { disabled: !state.current });
  open.addEventListener('click', () => input.click());
  input.addEventListener('change', async () => {
    const f = input.files?.[0];
    if (!f) return;
    const r = await analyse({ kind: 'file', file: await fileFrom(f) });
    if (r) { state.compare[which] = r; state.compare.result = null; render(); void runCompare(); }
  });
  cur.addEventListener('click', () => { state.compare[which] = state.current; state.compare.result = null; render(); void runCompare(); });
  return h('div', { class: 'slot', id: `compare-slot-${which}` },
    h('strong', {}, `Frame ${label}: `), h('span', { class: 'slot-name' }, res ? res.name : 'none yet'), ' ', cur, open, input);
}

async function runCompare(): Promise<void> {
  const { a, b } = state.compare;
  if (!a || !b || state.compare.result) return;
  const o = await state.bridge.compare(a.id, b.id);
  if (!o.ok) { showMessage(failureText(o)); return; }
  state.compare.result = o.value;
  if (state.view === 'compare') render();
}

function renderCompare(el: HTMLElement): void {
  el.append(h('div', { class: 'slots' }, slot('A', 'a'), slot('B', 'b')));
  const c = state.compare.result;
  const { a, b } = state.compare;
  if (!c || !a || !b) {
    el.append(h('p', { class: 'muted' }, 'Choose two frames: the same scales are used for both, and each zone gets a verdict.'));
    return;
  }
  const table = h('div', { class: 'compare-verdicts' });
  setMarkup(table, compareTableHtml(c));
  el.append(table);
  // one colour range for both maps
  const q: SizeQuantity = c.unit === 'arcsec' ? 'fwhmArcsec' : 'fwhmPx';
  const ranges = [a, b].map((r) => { const g = heatGrid(r.report, q); return g ? finiteRange(g.values) : null; }).filter((x): x is [number, number] => !!x);
  const domain: [number, number] | undefined = ranges.length ? [Math.min(...ranges.map((x) => x[0])), Math.max(...ranges.map((x) => x[1]))] : undefined;
  const w = Math.max(420, Math.floor(figureWidth() / 2) - 8);
  const pair = h('div', { class: 'pair' });
  for (const [r, tag] of [[a, 'A'], [b, 'B']] as const) {
    const holder = h('div', { class: 'figure' });
    setMarkup(holder, sizeSvg(r.report, { theme: theme(), quantity: q, width: w, domain, id: `cmp-${tag}`, title: `${tag}: ${r.name}` }));
    fitFigure(holder);
    pair.append(holder);
  }
  el.append(pair);
}

function renderSweep(el: HTMLElement): void {
  const input = h('input', { type: 'file', accept: ACCEPT, id: 'sweep-input', multiple: true, hidden: true, 'aria-label': 'Sweep frames' });
  const add = button('btn-sweep-add', 'Add frames…', 'Add frames taken at different spacer distances');
  const fit = button('btn-sweep-fit', 'Find best spacing', 'Fit the metric against spacer distance', { disabled: state.sweep.rows.filter((r) => r.spacingMm !== null).length < 2 });
  const clear = button('btn-sweep-clear', 'Clear', 'Remove all sweep frames', { disabled: state.sweep.rows.length === 0 });
  add.addEventListener('click', () => input.click());
  input.addEventListener('change', async () => {
    for (const f of Array.from(input.files ?? [])) {
      const r = await analyse({ kind: 'file', file: await fileFrom(f) });
      if (r) state.sweep.rows.push({ result: r, spacingMm: spacingFromName(f.name) });
    }
    state.sweep.result = null;
    render();
  });
  fit.addEventListener('click', async () => {
    const points = state.sweep.rows.filter((r) => r.spacingMm !== null).map((r) => ({ id: r.result.id, spacingMm: r.spacingMm as number }));
    const o = await state.bridge.sweep(points);
    if (!o.ok) { showMessage(failureText(o)); return; }
    state.sweep.result = o.value;
    render();
  });
  clear.addEventListener('click', () => { state.sweep = { rows: [], result: null }; render(); });
  el.append(toolbar(add, fit, clear, input, h('span', { class: 'muted' }, 'Frames at several spacer distances (a number followed by "mm" in the file name fills the distance in).')));
  const list = h('table', { class: 'sweep-rows' }, h('thead', {}, h('tr', {}, h('th', {}, 'Frame'), h('th', {}, 'Spacer (mm)'), h('th', {}, 'Stars'))));
  const body = h('tbody');
  state.sweep.rows.forEach((row, k) => {
    const inp = h('input', { type: 'number', step: 'any', value: row.spacingMm ?? '', 'aria-label': `Spacer distance of ${row.result.name}`, class: 'sweep-mm', 'data-row': k });
    inp.addEventListener('change', () => { const v = inp.valueAsNumber; row.spacingMm = Number.isFinite(v) ? v : null; state.sweep.result = null; render(); });
    body.append(h('tr', {}, h('td', {}, row.result.name), h('td', {}, inp), h('td', {}, String(row.result.report.summary.stars))));
  });
  list.append(body);
  if (state.sweep.rows.length) el.append(list);
  const res = state.sweep.result;
  if (res) {
    el.append(h('p', { id: 'sweep-best', class: 'sweep-best' }, res.bestSpacingMm === null
      ? `No best spacing found. ${res.note}`
      : `Best spacer distance: ${res.bestSpacingMm.toFixed(2)} mm${res.uncertaintyMm !== null ? ` ± ${res.uncertaintyMm.toFixed(2)} mm` : ''} (${res.evidence === 'minimum' ? 'smallest corner stars' : 'where the corner pattern changes orientation'}, ${res.points.length} frames).`));
    const holder = h('div', { class: 'figure sweep-figure' });
    setMarkup(holder, sweepSvg(res, { theme: theme(), width: Math.min(figureWidth(), 960) }));
    fitFigure(holder);
    el.append(holder);
  }
}

const RENDER: Record<ViewName, (el: HTMLElement) => void> = {
  sky: renderSky, shape: renderShape, size: renderSize, focus: renderFocus, corners: renderCorners,
  findings: renderFindings, compare: renderCompare, sweep: renderSweep,
};

function render(): void {
  const el = $('#view');
  el.replaceChildren();
  el.dataset.view = state.view;
  RENDER[state.view](el);
}

function switchView(v: ViewName, focusTab = false): void {
  state.view = v;
  for (const t of document.querySelectorAll<HTMLButtonElement>('#tabs [role=tab]')) {
    const on = t.dataset.view === v;
    t.setAttribute('aria-selected', on ? 'true' : 'false');
    t.tabIndex = on ? 0 : -1;
    if (on && focusTab) t.focus();
  }
  render();
}

// ---------- export ----------

async function exportKind(kind: 'json' | 'csv' | 'html'): Promise<void> {
  if (!state.current) return;
  const o = await state.bridge.exportReport(state.current.id, kind);
  if (!o.ok) showMessage(failureText(o));
  else if (o.value.saved) showMessage(`Saved ${o.value.filename}`, 'info');
}

async function exportPng(): Promise<void> {
  let svgs = Array.from(document.querySelectorAll<SVGSVGElement>('#view svg')).filter((s) => !s.closest('.stamp'));
  if (state.view === 'findings' && state.current) {
    const tmp = h('div', { class: 'offscreen' });
    setMarkup(tmp, findingsSvg(state.current.report.findings, { theme: theme(), width: 900 }));
    document.body.append(tmp);
    svgs = [tmp.querySelector('svg') as SVGSVGElement];
    try { await savePng(svgs); } finally { tmp.remove(); }
    return;
  }
  await savePng(svgs);
}

async function savePng(svgs: SVGSVGElement[]): Promise<void> {
  try {
    const bytes = await viewPng(svgs, theme().bg);
    const stem = (state.current?.name ?? 'skyloupe').replace(/\.[^.]*$/, '');
    const o = await state.bridge.savePng(`${stem}.${state.view}.png`, bytes);
    if (!o.ok) showMessage(failureText(o));
    else if (o.value.saved) showMessage(`Saved ${o.value.filename}`, 'info');
  } catch (err) {
    showMessage(`No PNG: ${err instanceof Error ? err.message : String(err)}`);
  }
}

// ---------- input: buttons, drop, keys, menu ----------

async function openDialog(): Promise<void> {
  const f = await state.bridge.openFileDialog();
  if (f) { await openMain({ kind: 'file', file: f }); return; }
  if ((await state.bridge.config()).mode === 'browser') ($('#file-input') as HTMLInputElement).click();
}

function toggleNight(): void {
  state.night = !state.night;
  document.body.classList.toggle('night', state.night);
  $('#btn-night').setAttribute('aria-pressed', String(state.night));
  try { localStorage.setItem('skyloupe.night', state.night ? '1' : '0'); } catch { /* storage may be off */ }
  render();
  void renderStar();
}

function stepStar(d: number): void {
  if (!state.order.length) return;
  const k = state.selected === null ? (d > 0 ? -1 : 0) : state.order.indexOf(state.selected);
  const next = state.order[(k + d + state.order.length) % state.order.length];
  if (state.view !== 'sky') switchView('sky');
  selectStar(next);
}

function wireInput(): void {
  const fileInput = $('#file-input') as HTMLInputElement;
  $('#btn-open').addEventListener('click', () => void openDialog());
  fileInput.addEventListener('change', async () => {
    const f = fileInput.files?.[0];
    fileInput.value = '';
    if (f) await openMain({ kind: 'file', file: await fileFrom(f) });
  });
  $('#btn-demo').addEventListener('click', () => void openMain({ kind: 'demo' }));
  $('#btn-cancel').addEventListener('click', () => void state.bridge.cancel());
  $('#btn-night').addEventListener('click', toggleNight);
  $('#btn-help').addEventListener('click', () => ($('#help-dialog') as HTMLDialogElement).showModal());
  $('#btn-export-html').addEventListener('click', () => void exportKind('html'));
  $('#btn-export-json').addEventListener('click', () => void exportKind('json'));
  $('#btn-export-csv').addEventListener('click', () => void exportKind('csv'));
  $('#btn-export-png').addEventListener('click', () => void exportPng());
  ($('#optics-form') as HTMLFormElement).addEventListener('submit', (ev) => {
    ev.preventDefault();
    if (!state.source) return;
    const val = (id: string) => { const v = ($(id) as HTMLInputElement).valueAsNumber; return Number.isFinite(v) && v > 0 ? v : undefined; };
    const optics: OpticsInput = {};
    const f = val('#in-focal'); if (f) optics.focalLengthMm = f;
    const p = val('#in-pixel'); if (p) optics.pixelSizeUm = p;
    const n = val('#in-fnum'); if (n) optics.fNumber = n;
    void openMain(state.source, optics);
  });
  const tabs = $('#tabs');
  tabs.addEventListener('click', (ev) => {
    const t = (ev.target as HTMLElement).closest<HTMLElement>('[role=tab]');
    if (t?.dataset.view) switchView(t.dataset.view as ViewName);
  });
  tabs.addEventListener('keydown', (ev) => {
    const k = VIEWS.findIndex((v) => v.name === state.view);
    if (ev.key === 'ArrowDown' || ev.key === 'ArrowRight') { ev.preventDefault(); switchView(VIEWS[(k + 1) % VIEWS.length].name, true); }
    if (ev.key === 'ArrowUp' || ev.key === 'ArrowLeft') { ev.preventDefault(); switchView(VIEWS[(k + VIEWS.length - 1) % VIEWS.length].name, true); }
  });

  // drag and drop anywhere on the page
  let depth = 0;
  const overlay = $('#drop-overlay');
  window.addEventListener('dragenter', (ev) => { ev.preventDefault(); depth++; overlay.hidden = false; });
  window.addEventListener('dragleave', () => { depth = Math.max(0, depth - 1); if (!depth) overlay.hidden = true; });
  window.addEventListener('dragover', (ev) => ev.preventDefault());
  window.addEventListener('drop', async (ev) => {
    ev.preventDefault();
    depth = 0;
    overlay.hidden = true;
    const f = ev.dataTransfer?.files?.[0];
    if (!f) return;
    const file = await fileFrom(f);
    if (state.view === 'compare') {
      const which = state.compare.a && !state.compare.b ? 'b' : 'a';
      const r = await analyse({ kind: 'file', file });
      if (r) { state.compare[which] = r; state.compare.result = null; render(); void runCompare(); }
    } else await openMain({ kind: 'file', file });
  });

  document.addEventListener('keydown', (ev) => {
    const t = ev.target as HTMLElement;
    if (ev.ctrlKey || ev.metaKey || ev.altKey) return;
    if (t && (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.tagName === 'SELECT')) return;
    const v = VIEWS.find((x) => x.key === ev.key);
    if (v) { switchView(v.name); return; }
    const onSky = state.view === 'sky';
    switch (ev.key) {
      case 'o': case 'O': void openDialog(); break;
      case 'd': case 'D': void openMain({ kind: 'demo' }); break;
      case 'n': case 'N': toggleNight(); break;
      case 'e': case 'E': void exportKind('html'); break;
      case 'p': case 'P': void exportPng(); break;
      case '?': ($('#help-dialog') as HTMLDialogElement).showModal(); break;
      case 'Escape': if (state.busy) void state.bridge.cancel(); break;
      case '+': case '=': if (onSky) zoomBy(2); break;
      case '-': case '_': if (onSky) zoomBy(0.5); break;
      case '0': if (onSky) zoomTo(zoomIdentity); break;
      case ']': stepStar(1); break;
      case '[': stepStar(-1); break;
      case 'ArrowLeft': case 'ArrowRight': case 'ArrowUp': case 'ArrowDown':
        if (onSky && t.closest('#view')) {
          ev.preventDefault();
          panBy(ev.key === 'ArrowLeft' ? 1 : ev.key === 'ArrowRight' ? -1 : 0, ev.key === 'ArrowUp' ? 1 : ev.key === 'ArrowDown' ? -1 : 0);
        }
        break;
      default: return;
    }
  });

  let resizeTimer: ReturnType<typeof setTimeout> | undefined;
  window.addEventListener('resize', () => { clearTimeout(resizeTimer); resizeTimer = setTimeout(render, 200); });
}

function onMenu(cmd: MenuCommand, file?: FrameFile): void {
  if (cmd === 'open' && file) { void openMain({ kind: 'file', file }); return; }
  if (cmd.startsWith('view:')) { const v = cmd.slice(5) as ViewName; if (RENDER[v]) switchView(v); return; }
  switch (cmd) {
    case 'open': void openDialog(); break;
    case 'open-demo': void openMain({ kind: 'demo' }); break;
    case 'export-json': void exportKind('json'); break;
    case 'export-csv': void exportKind('csv'); break;
    case 'export-html': void exportKind('html'); break;
    case 'export-png': void exportPng(); break;
    case 'night': toggleNight(); break;
    case 'cancel': void state.bridge.cancel(); break;
    case 'zoom-in': zoomBy(2); break;
    case 'zoom-out': zoomBy(0.5); break;
    case 'zoom-reset': zoomTo(zoomIdentity); break;
  }
}

async function boot(): Promise<void> {
  const token = document.querySelector<HTMLMetaElement>('meta[name="skyloupe-token"]')?.content;
  state.bridge = window.skyloupe ?? httpBridge(token ?? '');
  buildPage();
  try { state.night = localStorage.getItem('skyloupe.night') === '1'; } catch { /* storage may be off */ }
  document.body.classList.toggle('night', state.night);
  $('#btn-night').setAttribute('aria-pressed', String(state.night));
  state.bridge.onProgress(onProgress);
  state.bridge.onCommand(onMenu);
  wireInput();
  renderSummary();
  render();
  const cfg = await state.bridge.config();
  document.body.dataset.mode = cfg.mode;
  ($('#btn-demo') as HTMLButtonElement).disabled = !cfg.demoAvailable;
  document.body.dataset.ready = '1';
  if (cfg.openDemo && cfg.demoAvailable) await openMain({ kind: 'demo' });
}

void boot();
