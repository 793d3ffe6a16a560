/**
 * Browser mode: the page and the bridge over HTTP, bound to 127.0.0.1 only. Every request,
 * page or API, must carry the per-run token (?token= for the page and its assets, the
 * X-Skyloupe-Token header for the API): without it 401, with a wrong one 403. Frames arrive
 * as uploads; no request names a path on this machine.
 */
import http from 'node:http';
import { randomBytes, timingSafeEqual } from 'node:crypto';
import type { AddressInfo } from 'node:net';
import { usage } from '../../core/errors.ts';
import { VERSION } from '../../core/version.ts';
import { EngineSession, toOutcome } from '../engine/session.ts';
import * as check from '../engine/validate.ts';
import { pageHtml, PAGE_CSP, PAGE_CSP_HEADER_EXTRA } from '../page.ts';
import type { PageAssets } from '../build.ts';
import type { AppConfig, Outcome } from '../preload/bridge.ts';

export const LOOPBACK = '127.0.0.1';
export const TOKEN_HEADER = 'x-skyloupe-token';

export interface ServerOptions {
  session: EngineSession;
  assets: PageAssets;
  /** 0 = any free port. */
  port?: number;
  /** Default: 32 random bytes, hex. */
  token?: string;
  openDemo?: boolean;
}

export interface RunningServer {
  url: string;
  port: number;
  token: string;
  close(): Promise<void>;
}

const SECURITY_HEADERS = {
  'X-Content-Type-Options': 'nosniff',
  'Referrer-Policy': 'no-referrer',
  'Cache-Control': 'no-store',
  'X-Frame-Options': 'DENY',
  'Cross-Origin-Opener-Policy': 'same-origin',
  'Cross-Origin-Resource-Policy': 'same-origin',
};

function send(res: http.ServerResponse, status: number, type: string, body: string | Buffer, extra: Record<string, string> = {}): void {
  res.writeHead(status, { 'Content-Type': type, 'Content-Length': Buffer.byteLength(body), ...SECURITY_HEADERS, ...extra });
  res.end(body);
}

function sendJson(res: http.ServerResponse, status: number, value: unknown): void {
  send(res, status, 'application/json; charset=utf-8', JSON.stringify(value));
}

function sameToken(given: string, token: string): boolean {
  const a = Buffer.from(given);
  const b = Buffer.from(token);
  return a.length === b.length && timingSafeEqual(a, b);
}

/** 'ok', or the status to refuse with: 401 without a token, 403 with a wrong one or a foreign Host. */
export function authorize(req: Pick<http.IncomingMessage, 'headers' | 'url'>, token: string, port: number): 'ok' | 401 | 403 {
  const host = req.headers.host ?? '';
  // a page on another origin that resolves to this machine (DNS rebinding) sends its own Host
  if (host !== `${LOOPBACK}:${port}` && host !== `localhost:${port}`) return 403;
  const url = new URL(req.url ?? '/', `http://${LOOPBACK}`);
  const given = (req.headers[TOKEN_HEADER] as string | undefined) ?? url.searchParams.get('token');
  if (!given) return 401;
  return sameToken(given, token) ? 'ok' : 403;
}

async function readBody(req: http.IncomingMessage, limit: number): Promise<Buffer> {
  const declared = Number(req.headers['content-length'] ?? NaN);
  if (declared > limit) throw usage(`the upload is too large (${declared} bytes, limit ${limit})`);
  const chunks: Buffer[] = [];
  let size = 0;
  for await (const chunk of req) {
    size += (chunk as Buffer).length;
    if (size > limit) throw usage(`the upload is too large (limit ${limit} bytes)`);
    chunks.push(chunk as Buffer);
  }
  return Buffer.concat(chunks);
}

async function readJson(req: http.IncomingMessage): Promise<Record<string, unknown>> {
  const body = await readBody(req, 1024 * 1024);
  try {
    const v = JSON.parse(body.toString('utf8')) as unknown;
    if (typeof v !== 'object' || v === null || Array.isArray(v)) throw new Error('not an object');
    return v as Record<string, unknown>;
  } catch {
    throw usage('the request body is not a JSON object');
  }
}

function opticsParam(url: URL): unknown {
  const raw = url.searchParams.get('optics');
  if (!raw) return undefined;
  try {
    return JSON.parse(raw) as unknown;
  } catch {
    throw usage('optics must be JSON');
  }
}

export async function startServer(opts: ServerOptions): Promise<RunningServer> {
  const token = opts.token ?? randomBytes(32).toString('hex');
  const { session, assets } = opts;
  let port = 0;

  /** Streams progress lines, then the outcome, as newline-delimited JSON. */
  async function streamAnalysis(res: http.ServerResponse, run: (onProgress: (p: unknown) => void) => Promise<Outcome<unknown>>): Promise<void> {
    res.writeHead(200, { 'Content-Type': 'application/x-ndjson; charset=utf-8', ...SECURITY_HEADERS });
    const line = (v: unknown) => { if (!res.writableEnded) res.write(JSON.stringify(v) + '\n'); };
    const outcome = await run((p) => line({ type: 'progress', progress: p }));
    line({ type: 'outcome', outcome });
    res.end();
  }

  async function api(req: http.IncomingMessage, res: http.ServerResponse, url: URL): Promise<void> {
    const route = `${req.method} ${url.pathname}`;
    switch (route) {
      case 'GET /api/config': {
        const cfg: AppConfig = { mode: 'browser', version: VERSION, demoAvailable: session.demoAvailable, openDemo: !!opts.openDemo };
        return sendJson(res, 200, cfg);
      }
      case 'POST /api/analyze': {
        const name = check.fileName(url.searchParams.get('name'));
        const optics = check.optics(opticsParam(url));
        const bytes = check.frameBytes(new Uint8Array(await readBody(req, check.MAX_UPLOAD_BYTES)));
        return streamAnalysis(res, (onP) => session.analyze({ name, bytes }, optics, onP));
      }
      case 'POST /api/analyze-demo': {
        const optics = check.optics(opticsParam(url));
        return streamAnalysis(res, (onP) => session.analyzeDemo(optics, onP));
      }
      case 'POST /api/cancel':
        session.cancel();
        return sendJson(res, 200, { ok: true, value: null });
      case 'GET /api/stamp':
        return sendJson(res, 200, session.stamp(check.analysisId(url.searchParams.get('id')), check.starIndex(Number(url.searchParams.get('i')))));
      case 'POST /api/compare': {
        const b = await readJson(req);
        return sendJson(res, 200, session.compare(check.analysisId(b.a), check.analysisId(b.b)));
      }
      case 'POST /api/sweep': {
        const b = await readJson(req);
        return sendJson(res, 200, session.sweep(check.sweepPoints(b.points)));
      }
      case 'POST /api/forget-optics': {
        const b = await readJson(req);
        return sendJson(res, 200, await session.forgetOptics(check.cameraKey(b.camera)));
      }
      case 'POST /api/focus-pair': {
        const b = await readJson(req);
        return sendJson(res, 200, session.focusPair(check.analysisId(b.a), check.analysisId(b.b), check.focusStepUm(b.stepUm)));
      }
      case 'GET /api/export': {
        const out = session.exportFile(check.analysisId(url.searchParams.get('id')), check.exportKind(url.searchParams.get('kind')));
        if (!out.ok) return sendJson(res, 404, out);
        const f = out.value;
        return send(res, 200, `${f.mime}; charset=utf-8`, f.body, {
          'Content-Disposition': `attachment; filename="${f.filename.replace(/[^\w.-]/g, '_')}"`,
          'X-Skyloupe-Filename': encodeURIComponent(f.filename),
        });
      }
      default:
        return sendJson(res, 404, { ok: false, kind: 'not-found', message: `no such request: ${route}` });
    }
  }

  const server = http.createServer(async (req, res) => {
    const auth = authorize(req, token, port);
    if (auth !== 'ok') {
      return send(res, auth, 'text/plain; charset=utf-8', auth === 401 ? 'token required\n' : 'forbidden\n', auth === 401 ? { 'WWW-Authenticate': 'Token' } : {});
    }
    const url = new URL(req.url ?? '/', `http://${LOOPBACK}`);
    try {
      if (url.pathname.startsWith('/api/')) return await api(req, res, url);
      if (req.method !== 'GET' && req.method !== 'HEAD') return send(res, 405, 'text/plain; charset=utf-8', 'method not allowed\n');
      const q = `?token=${encodeURIComponent(token)}`;
      switch (url.pathname) {
        case '/':
        case '/index.html':
          return send(res, 200, 'text/html; charset=utf-8', pageHtml({ query: q, token }), { 'Content-Security-Policy': PAGE_CSP + PAGE_CSP_HEADER_EXTRA });
        case '/app.js':
          return send(res, 200, 'text/javascript; charset=utf-8', assets.js);
        case '/app.css':
          return send(res, 200, 'text/css; charset=utf-8', assets.css);
        default:
          return send(res, 404, 'text/plain; charset=utf-8', 'not found\n');
      }
    } catch (err) {
      const o = toOutcome(err);
      if (!res.headersSent) sendJson(res, !o.ok && o.kind === 'usage' ? 400 : 500, o);
      else res.end();
    }
  });
  server.requestTimeout = 0; // uploads of large frames and long analyses
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(opts.port ?? 0, LOOPBACK, () => resolve());
  });
  port = (server.address() as AddressInfo).port;
  return {
    url: `http://${LOOPBACK}:${port}/?token=${token}`,
    port,
    token,
    close: () => new Promise<void>((resolve) => {
      server.closeAllConnections();
      server.close(() => resolve());
    }),
  };
}
