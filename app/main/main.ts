/**
 * The desktop program's main process (Electron): one hardened window showing the page from
 * the app's own skyloupe:// origin, native dialogs, a menu, recent files, and the engine in a
 * worker thread (EngineSession). Bundled to dist/app/main.cjs by app/build.ts; never loaded in CI.
 */
import { app, BrowserWindow, Menu, dialog, ipcMain, protocol, session as esession, type IpcMainInvokeEvent, type MenuItemConstructorOptions } from 'electron';
import { readFile, stat } from 'node:fs/promises';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { VERSION } from '../../core/version.ts';
import { unreadable } from '../../core/errors.ts';
import { writeFileAtomic } from '../../core/report/save.ts';
import { EngineSession, fail, toOutcome } from '../engine/session.ts';
import { CameraMemory } from '../engine/memory.ts';
import * as check from '../engine/validate.ts';
import { pageHtml, PAGE_CSP, PAGE_CSP_HEADER_EXTRA } from '../page.ts';
import { CHANNELS, type AppConfig, type FrameFile, type MenuCommand, type Outcome, type SavedFile } from '../preload/bridge.ts';
import { RecentFiles } from './recent.ts';
import { FRAME_EXTENSIONS } from '../../core/frame/extensions.ts';

const SCHEME = 'skyloupe';
const ORIGIN = `${SCHEME}://app`;
const FRAME_FILTERS = [
  { name: 'Frames', extensions: [...new Set(FRAME_EXTENSIONS.map((e) => e.split('.').pop() as string))] },
  { name: 'All files', extensions: ['*'] },
];

const here = __dirname; // dist/app
/** Worker threads start from files on disk: in a package they sit beside the archive (asarUnpack). */
const unpacked = here.replace(/app\.asar(?=[\\/]|$)/, 'app.asar.unpacked');
const openDemo = process.argv.includes('--demo');
const fileArg = process.argv.slice(2).find((a) => !a.startsWith('-') && /\.(fits?|fts|tiff?|png|jpe?g)$/i.test(a));

protocol.registerSchemesAsPrivileged([{ scheme: SCHEME, privileges: { standard: true, secure: true, supportFetchAPI: false, corsEnabled: false } }]);

let win: BrowserWindow | null = null;
let engine: EngineSession;
let recent: RecentFiles;

function demoPath(): string {
  const packaged = path.join(process.resourcesPath ?? '', 'sample-data', 'demo-frame.fits');
  return app.isPackaged && existsSync(packaged) ? packaged : path.join(here, '..', '..', 'sample-data', 'demo-frame.fits');
}

async function servePage(req: Request): Promise<Response> {
  const url = new URL(req.url);
  const headers = { 'Content-Security-Policy': PAGE_CSP + PAGE_CSP_HEADER_EXTRA, 'X-Content-Type-Options': 'nosniff' };
  const asset = (file: string, type: string) => readFile(path.join(here, 'renderer', file), 'utf8').then((t) => new Response(t, { headers: { ...headers, 'Content-Type': type } }));
  if (url.host !== 'app') return new Response('not found', { status: 404 });
  switch (url.pathname) {
    case '/':
    case '/index.html': return new Response(pageHtml(), { headers: { ...headers, 'Content-Type': 'text/html; charset=utf-8' } });
    case '/app.js': return asset('app.js', 'text/javascript; charset=utf-8');
    case '/app.css': return asset('app.css', 'text/css; charset=utf-8');
    default: return new Response('not found', { status: 404 });
  }
}

/** Only our own page may call the bridge. */
function fromPage(e: IpcMainInvokeEvent): boolean {
  return !!win && e.sender === win.webContents && (e.senderFrame?.url ?? '').startsWith(`${ORIGIN}/`);
}

function handle(channel: string, fn: (...args: unknown[]) => Promise<unknown> | unknown): void {
  ipcMain.handle(channel, async (e, ...args) => {
    if (!fromPage(e)) return fail('usage', 'request from an unknown page refused');
    try {
      return await fn(...args);
    } catch (err) {
      return toOutcome(err);
    }
  });
}

function send(cmd: MenuCommand, file?: FrameFile): void {
  win?.webContents.send(CHANNELS.command, cmd, file);
}

/** A file the user chose (dialog, recent list, command line): read it for the page. */
async function readChosen(p: string): Promise<FrameFile> {
  const st = await stat(p).catch(() => { throw unreadable(`${p}: file not found`); });
  if (!st.isFile()) throw unreadable(`${p}: not a regular file`);
  if (st.size > check.MAX_UPLOAD_BYTES) throw unreadable(`${p}: file too large (${st.size} bytes)`);
  const buf = await readFile(p);
  await recent.add(p);
  buildMenu();
  return { name: path.basename(p), bytes: buf.buffer.slice(buf.byteOffset, buf.byteOffset + buf.byteLength) as ArrayBuffer };
}

async function saveAs(filename: string, body: string | Uint8Array, filters: Electron.FileFilter[]): Promise<Outcome<SavedFile>> {
  if (!win) return fail('internal', 'no window');
  const r = await dialog.showSaveDialog(win, { defaultPath: path.join(app.getPath('documents'), filename), filters });
  if (r.canceled || !r.filePath) return { ok: true, value: { saved: false, filename } };
  await writeFileAtomic(r.filePath, body);
  return { ok: true, value: { saved: true, filename: path.basename(r.filePath) } };
}

function registerBridge(): void {
  handle(CHANNELS.config, (): AppConfig => ({ mode: 'desktop', version: VERSION, demoAvailable: engine.demoAvailable, openDemo }));
  handle(CHANNELS.analyze, (name, bytes, optics) => engine.analyze({ name: check.fileName(name), bytes: check.frameBytes(bytes) }, check.optics(optics)));
  handle(CHANNELS.analyzeDemo, (optics) => engine.analyzeDemo(check.optics(optics)));
  handle(CHANNELS.cancel, () => { engine.cancel(); return null; });
  handle(CHANNELS.stamp, (id, i) => engine.stamp(check.analysisId(id), check.starIndex(i)));
  handle(CHANNELS.compare, (a, b) => engine.compare(check.analysisId(a), check.analysisId(b)));
  handle(CHANNELS.sweep, (points) => engine.sweep(check.sweepPoints(points)));
  handle(CHANNELS.throughFocus, (req) => engine.throughFocus(check.focusSeries(req)));
  handle(CHANNELS.forgetOptics, (camera) => engine.forgetOptics(check.cameraKey(camera)));
  handle(CHANNELS.focusPair, (a, b, stepUm) => engine.focusPair(check.analysisId(a), check.analysisId(b), check.focusStepUm(stepUm)));
  handle(CHANNELS.exportReport, async (id, kind) => {
    const k = check.exportKind(kind);
    const out = engine.exportFile(check.analysisId(id), k);
    if (!out.ok) return out;
    return saveAs(out.value.filename, out.value.body, [{ name: k.toUpperCase(), extensions: [k] }]);
  });
  handle(CHANNELS.savePng, (filename, bytes) => saveAs(check.pngName(filename), check.pngBytes(bytes), [{ name: 'PNG', extensions: ['png'] }]));
  handle(CHANNELS.openFileDialog, async () => {
    if (!win) return null;
    const r = await dialog.showOpenDialog(win, { properties: ['openFile'], filters: FRAME_FILTERS });
    if (r.canceled || !r.filePaths[0]) return null;
    return readChosen(r.filePaths[0]);
  });
}

function buildMenu(): void {
  const views: [string, string][] = [['sky', 'Sky'], ['shape', 'Shape map'], ['size', 'Size map'], ['sensor', 'Sensor tilt'], ['stacks', 'Stacked stars'], ['findings', 'Findings'], ['compare', 'Compare'], ['sweep', 'Spacer sweep'], ['focuspair', 'Focus pair'], ['distortion', 'Distortion'], ['through-focus', 'Through focus']];
  const openRecent = async (p: string) => {
    try {
      send('open', await readChosen(p));
    } catch (err) {
      const o = toOutcome<never>(err);
      dialog.showErrorBox('skyloupe', o.ok ? String(err) : o.message);
    }
  };
  const template: MenuItemConstructorOptions[] = [
    ...(process.platform === 'darwin' ? [{ role: 'appMenu' as const }] : []),
    {
      label: 'File',
      submenu: [
        { label: 'Open Frame…', accelerator: 'CmdOrCtrl+O', click: () => send('open') },
        { label: 'Open Demo Frame', accelerator: 'CmdOrCtrl+D', click: () => send('open-demo') },
        { label: 'Open Recent', submenu: recent.list().length ? recent.list().map((p) => ({ label: p, click: () => void openRecent(p) })) : [{ label: 'No recent frames', enabled: false }] },
        { type: 'separator' },
        { label: 'Save Report (HTML)…', accelerator: 'CmdOrCtrl+S', click: () => send('export-html') },
        { label: 'Save Report (JSON)…', accelerator: 'CmdOrCtrl+Shift+J', click: () => send('export-json') },
        { label: 'Save Star Table (CSV)…', accelerator: 'CmdOrCtrl+Shift+C', click: () => send('export-csv') },
        { label: 'Save View as PNG…', accelerator: 'CmdOrCtrl+Shift+S', click: () => send('export-png') },
        { type: 'separator' },
        { label: 'Stop Analysis', click: () => send('cancel') },
        { type: 'separator' },
        process.platform === 'darwin' ? { role: 'close' } : { role: 'quit' },
      ],
    },
    { role: 'editMenu' },
    {
      label: 'View',
      submenu: [
        ...views.map(([v, label], i) => ({ label, accelerator: i < 9 ? `CmdOrCtrl+${i + 1}` : undefined, click: () => send(`view:${v}`) })),
        { type: 'separator' },
        { label: 'Night Mode', accelerator: 'CmdOrCtrl+Shift+N', click: () => send('night') },
        { label: 'Zoom In', accelerator: 'CmdOrCtrl+=', click: () => send('zoom-in') },
        { label: 'Zoom Out', accelerator: 'CmdOrCtrl+-', click: () => send('zoom-out') },
        { label: 'Whole Frame', accelerator: 'CmdOrCtrl+0', click: () => send('zoom-reset') },
        { type: 'separator' },
        { role: 'togglefullscreen' },
        ...(app.isPackaged ? [] : [{ role: 'toggleDevTools' as const }]),
      ],
    },
    { role: 'windowMenu' },
  ];
  Menu.setApplicationMenu(Menu.buildFromTemplate(template));
}

function hardenSession(): void {
  const s = esession.defaultSession;
  s.setPermissionRequestHandler((_wc, _perm, cb) => cb(false));
  s.setPermissionCheckHandler(() => false);
  // no remote content: only the app's own origin and in-page data:/blob: URLs load
  s.webRequest.onBeforeRequest((details, cb) => {
    const ok = details.url.startsWith(`${ORIGIN}/`) || details.url.startsWith('data:') || details.url.startsWith('blob:') || details.url.startsWith('devtools:');
    cb({ cancel: !ok });
  });
}

function createWindow(): void {
  win = new BrowserWindow({
    width: 1400, height: 900, minWidth: 1000, minHeight: 640, title: 'skyloupe', backgroundColor: '#101418', show: false,
    webPreferences: {
      preload: path.join(here, 'preload.cjs'),
      contextIsolation: true, sandbox: true, nodeIntegration: false, nodeIntegrationInWorker: false,
      webSecurity: true, allowRunningInsecureContent: false, webviewTag: false, spellcheck: false,
      navigateOnDragDrop: false, devTools: !app.isPackaged,
    },
  });
  const wc = win.webContents;
  wc.on('will-navigate', (e) => e.preventDefault());
  wc.on('will-redirect', (e) => e.preventDefault());
  wc.setWindowOpenHandler(() => ({ action: 'deny' }));
  wc.on('will-attach-webview', (e) => e.preventDefault());
  win.once('ready-to-show', () => win?.show());
  win.on('closed', () => { win = null; });
  void win.loadURL(`${ORIGIN}/index.html`);
  if (fileArg) wc.once('did-finish-load', () => { readChosen(path.resolve(fileArg)).then((f) => send('open', f), () => undefined); });
}

app.whenReady().then(() => {
  recent = new RecentFiles(path.join(app.getPath('userData'), 'recent.json'), (p) => app.addRecentDocument(p));
  engine = new EngineSession({
    workerUrl: pathToFileURL(path.join(unpacked, 'analysis-worker.mjs')),
    demoPath: demoPath(),
    memory: new CameraMemory(path.join(app.getPath('userData'), 'cameras.json')),
  });
  engine.onProgress((p) => win?.webContents.send(CHANNELS.progress, p));
  protocol.handle(SCHEME, servePage);
  hardenSession();
  registerBridge();
  buildMenu();
  createWindow();
  app.on('activate', () => { if (!win) createWindow(); });
}, (err) => {
  process.stderr.write(`skyloupe: ${String(err)}\n`);
  app.exit(1);
});

app.on('window-all-closed', () => {
  void engine?.close();
  if (process.platform !== 'darwin') app.quit();
});
