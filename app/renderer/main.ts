/**
 * The page: drop or open a frame, follow the progress, read the views and the findings.
 * It reaches the engine only through the bridge (window.skyloupe in the desktop program,
 * HTTP with the run's token in browser mode) and draws every figure with core/report/svg.
 * This module boots the page and wires buttons, keys, drops and menus; each view lives in
 * views/ (registry: views/index.ts), the side panel in side.ts.
 */
import { zoomIdentity } from 'd3-zoom';
import { findingsSvg, diagnosisOf } from '../../core/report/svg/index.ts';
import type { AnalysisResult, FrameFile, MenuCommand, OpticsInput, SkyloupeBridge } from '../preload/bridge.ts';
import { httpBridge } from './http-bridge.ts';
import { $, h, setMarkup } from './dom.ts';
import { viewPng } from './png.ts';
import { state, theme, type FrameSource } from './state.ts';
import type { ViewContext } from './context.ts';
import { VIEWS, viewNamed } from './views/index.ts';
import { panBy, toggleLabels, zoomBy, zoomReset } from './views/sky.ts';
import { setCompareFrame } from './views/compare.ts';
import { showMessage, failureText, setBusy, onProgress } from './messages.ts';
import { renderSummary, renderStar, selectStar } from './side.ts';
import { openOptics, renderOptics, toggleOptics } from './optics-panel.ts';
import { ACCEPT, button, fileFrom } from './widgets.ts';

declare global {
  interface Window { skyloupe?: SkyloupeBridge }
}

// ---------- page skeleton ----------

/** What each view shows (by registry name; a view missing here shows its label only). */
const VIEW_HELP: Record<string, string> = {
  sky: 'the frame with every measured star marked; click a star for its numbers and pixels. The key under it names the marks; the bar gives the scale.',
  shape: 'how stretched the stars are across the field: a line along each zone\'s (or star\'s) long axis, longer for more stretch.',
  size: 'a smooth map of star size (FWHM) or ellipticity over the frame, with contour lines and a colour key.',
  sensor: 'the sensor seen edge-on in two cuts, along and across the tilt, against best focus: how far each edge sits from focus in µm and what to turn.',
  stacks: 'each zone\'s clean stars aligned and averaged into one star, laid out where the zones lie, with contour lines; click a zone for its stars.',
  findings: 'what the diagnosis found, most important first, with buttons for what to do next.',
  compare: 'two frames zone by zone on the same scale (two lenses, two settings).',
  sweep: 'frames at several spacer distances: the spacing where the corner stars come out best.',
  focuspair: 'two frames a known focus step apart: which side of the sensor is too close to the lens.',
  distortion: 'where the frame is on the sky and what the lens does to geometry: a square grid as the lens draws it and the measured shift of each catalogue star, both drawn enlarged by a stated factor.',
  'through-focus': 'three or more frames at different focuser positions: focus curves per zone, the best-focus surface (tilt, curvature), spherical aberration, and one star\'s discs across the series.',
};

const TERMS: [string, string][] = [
  ['FWHM', 'full width at half maximum: the diameter of a star where its light falls to half the peak, in pixels or arcseconds. Smaller is sharper.'],
  ['HFD', 'half-flux diameter: the diameter holding half of a star\'s light. Steadier than FWHM for out-of-focus stars.'],
  ['Ellipticity', '1 − b/a for a star with long axis a and short axis b: 0 is round, larger is more stretched.'],
  ['a/b', 'elongation, long axis over short axis (1 = round).'],
  ['Tilt', 'the sensor not square to the optical axis: one side sharper than the other. In µm of focus change across the frame, or in mrad.'],
  ['Field curvature', 'the sharp image lies on a curved surface: the centre and the corners focus at different places.'],
  ['Astigmatism, spacing', 'stars stretched along or across the radius in the corners; with a flattener or reducer often a wrong distance to the sensor.'],
  ['Coma', 'stars with a flare pointing toward or away from the centre.'],
  ['σ (significance)', 'how many standard errors a measured effect stands above noise; 3 σ and more is taken as real.'],
  ['Zone', 'one cell of the grid the frame is divided into; zone values are robust means of the stars inside.'],
  ['Distortion', 'the lens moves stars from where a distortion-free lens would put them, without blurring them: barrel (squeezed toward the corners), pincushion (stretched), mustache (both). In % at the corners.'],
  ['Saturated', 'a star whose brightest pixels reached the camera\'s ceiling: its core is clipped, so its size and shape are not measured.'],
  ['Critical focus zone', 'the range of focuser travel over which a star looks equally sharp, ±2.44 λ N² (common practice).'],
];

function helpDialog(): HTMLDialogElement {
  const keys: [string, string][] = [
    [VIEWS.map((v) => v.key.toUpperCase()).join(' '), 'switch view'], ['O', 'open a frame'], ['D', 'demo frame'], ['F', 'optics in use'], ['N', 'night mode'],
    ['E', 'save the HTML report'], ['P', 'save the view as PNG'], ['+  −  0', 'zoom in, out, reset (Sky)'], ['arrows', 'pan (Sky)'],
    ['[  ]', 'previous / next star (Sky)'], ['L', 'catalogue names on or off (Sky)'], ['Esc', 'stop the analysis, close this'], ['?', 'this help'],
  ];
  const dl = (rows: [string, string][]) => h('dl', {}, ...rows.flatMap(([k, v]) => [h('dt', {}, k), h('dd', {}, v)]));
  return h('dialog', { id: 'help-dialog', 'aria-label': 'Help' },
    h('h2', {}, 'Help'),
    h('h3', {}, 'Views'),
    dl(VIEWS.map((v) => [`${v.key}  ${v.label}`, VIEW_HELP[v.name] ?? ''])),
    h('h3', {}, 'Terms'),
    dl(TERMS),
    h('h3', {}, 'Keys'),
    h('table', {}, h('tbody', {}, ...keys.map(([k, v]) => h('tr', {}, h('th', { scope: 'row' }, k), h('td', {}, v))))),
    h('form', { method: 'dialog' }, h('button', { type: 'submit', id: 'btn-help-close' }, 'Close')));
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
      button('btn-optics-panel', 'Optics', 'Optics in use and where they came from (F)', { 'aria-expanded': 'false', 'aria-controls': 'optics-form', disabled: true }),
      button('btn-night', 'Night', 'Red night mode for the telescope (N)', { 'aria-pressed': 'false' }),
      button('btn-help', 'Help', 'Views, terms and keys (?)')),
    h('div', { id: 'progress', class: 'progress', hidden: true, role: 'status', 'aria-live': 'polite' },
      h('span', { id: 'progress-label' }, ''),
      h('progress', { id: 'progress-bar', max: '1', value: '0' }),
      button('btn-cancel', 'Cancel', 'Stop the analysis (Esc)')),
    h('div', { id: 'message', class: 'message', role: 'alert', hidden: true }),
    h('form', { id: 'optics-form', class: 'optics-form', hidden: true, 'aria-label': 'Optics' },
      h('p', { id: 'optics-why' }),
      h('label', {}, 'Focal length ', h('input', { id: 'in-focal', name: 'focalLengthMm', type: 'number', step: 'any', min: '1', max: '100000', inputmode: 'decimal' }), ' mm ', h('span', { id: 'src-focalLengthMm', class: 'optics-src' })),
      h('label', {}, 'Pixel size ', h('input', { id: 'in-pixel', name: 'pixelSizeUm', type: 'number', step: 'any', min: '0.2', max: '100', inputmode: 'decimal' }), ' µm ', h('span', { id: 'src-pixelSizeUm', class: 'optics-src' })),
      h('label', {}, 'f-number f/', h('input', { id: 'in-fnum', name: 'fNumber', type: 'number', step: 'any', min: '0.5', max: '200', inputmode: 'decimal' }), ' ', h('span', { id: 'src-fNumber', class: 'optics-src' })),
      h('span', { class: 'optics-buttons' },
        h('button', { id: 'btn-optics', type: 'submit' }, 'Analyse again with these'),
        button('btn-optics-forget', 'Forget remembered optics', 'Forget what is remembered for this camera and analyse again', { hidden: true }),
        button('btn-optics-close', 'Close', 'Hide the optics fields'),
        h('span', { id: 'optics-camera', class: 'muted' }))),
    h('div', { class: 'body' },
      h('nav', { id: 'tabs', class: 'tabs', role: 'tablist', 'aria-label': 'Views', 'aria-orientation': 'vertical' }, ...tabs),
      h('main', { id: 'view', class: 'view', role: 'tabpanel', tabindex: '0', 'aria-live': 'polite' }),
      h('aside', { id: 'side', class: 'side' },
        h('section', { id: 'summary', class: 'summary-panel', 'aria-label': 'Summary' }),
        h('section', { id: 'star-panel', class: 'star-panel', 'aria-label': 'Selected star' }))),
    h('div', { id: 'drop-overlay', class: 'drop-overlay', hidden: true }, h('div', {}, 'Drop a frame to analyse it')),
    helpDialog(),
  );
  document.body.append(app);
}

// ---------- analysis ----------

async function analyse(source: FrameSource, optics?: OpticsInput): Promise<AnalysisResult | null> {
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

async function openMain(source: FrameSource, optics?: OpticsInput): Promise<void> {
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
  void renderStar();
  // a frame without findings opens on the sky; with findings, first what to act on
  const major = (r.report.findings ?? []).some((f) => f.severity === 'major');
  switchView(major && state.view === 'sky' && diagnosisOf(r.report) ? 'findings' : state.view);
}

// ---------- views ----------

const ctx: ViewContext = {
  state,
  get bridge() { return state.bridge; },
  theme,
  rerender: () => render(),
  switchView: (name, focusTab) => switchView(name, focusTab),
  analyse: (source) => analyse(source),
  openMain: (source) => openMain(source),
  showMessage,
  failureText,
  selectStar,
  openOptics,
};

function render(): void {
  const el = $('#view');
  el.replaceChildren();
  el.dataset.view = state.view;
  (viewNamed(state.view) ?? VIEWS[0]).render(el, ctx);
}

function switchView(v: string, focusTab = false): void {
  if (!viewNamed(v)) return;
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
  $('#btn-optics-panel').addEventListener('click', toggleOptics);
  $('#btn-optics-close').addEventListener('click', () => { $('#optics-form').hidden = true; $('#btn-optics-panel').setAttribute('aria-expanded', 'false'); });
  $('#btn-optics-forget').addEventListener('click', async () => {
    const r = state.current;
    if (!r || !state.source) return;
    const o = await state.bridge.forgetOptics(r.camera);
    if (!o.ok) { showMessage(failureText(o)); return; }
    await openMain(state.source);
  });
  $('#summary').addEventListener('click', (ev) => {
    if ((ev.target as HTMLElement).closest('[data-action="optics"]')) openOptics();
  });
  ($('#optics-form') as HTMLFormElement).addEventListener('submit', (ev) => {
    ev.preventDefault();
    if (!state.source) return;
    const val = (id: string) => { const v = ($(id) as HTMLInputElement).valueAsNumber; return Number.isFinite(v) && v > 0 ? v : undefined; };
    // only what the user changed (or filled in) counts as typed: values from the file stay the file's
    const inUse = state.current?.report.frame.optics;
    const given = state.current?.opticsGiven ?? {};
    const optics: OpticsInput = {};
    const take = (k: keyof OpticsInput, id: string) => {
      const v = val(id);
      if (v !== undefined && (v !== inUse?.[k] || given[k] !== undefined)) optics[k] = v;
    };
    take('focalLengthMm', '#in-focal');
    take('pixelSizeUm', '#in-pixel');
    take('fNumber', '#in-fnum');
    void openMain(state.source, Object.keys(optics).length ? optics : undefined);
  });
  const tabs = $('#tabs');
  tabs.addEventListener('click', (ev) => {
    const t = (ev.target as HTMLElement).closest<HTMLElement>('[role=tab]');
    if (t?.dataset.view) switchView(t.dataset.view);
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
    const dropped = Array.from(ev.dataTransfer?.files ?? []);
    const f = dropped[0];
    if (!f) return;
    const view = viewNamed(state.view);
    if (view?.drop) { await view.drop(await Promise.all(dropped.map(fileFrom)), ctx); return; }
    const file = await fileFrom(f);
    if (state.view === 'compare') {
      const which = state.compare.a && !state.compare.b ? 'b' : 'a';
      const r = await analyse({ kind: 'file', file });
      if (r) setCompareFrame(ctx, which, r);
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
      case 'l': case 'L': if (onSky) toggleLabels(ctx); break;
      case 'f': case 'F': if (state.current) toggleOptics(); break;
      case 'e': case 'E': void exportKind('html'); break;
      case 'p': case 'P': void exportPng(); break;
      case '?': ($('#help-dialog') as HTMLDialogElement).showModal(); break;
      case 'Escape': if (state.busy) void state.bridge.cancel(); break;
      case '+': case '=': if (onSky) zoomBy(2); break;
      case '-': case '_': if (onSky) zoomBy(0.5); break;
      case '0': if (onSky) zoomReset(); break;
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
  if (cmd.startsWith('view:')) { switchView(cmd.slice(5)); return; }
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
    case 'zoom-reset': zoomReset(); break;
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
