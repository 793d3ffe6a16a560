/**
 * Browser mode's server: bound to the loopback address only, and every request without the
 * run's token refused. Status codes per RFC 9110 section 15.5.2 (401: no credentials) and
 * 15.5.4 (403: credentials refused); loopback is 127.0.0.0/8 (RFC 6890, table 4).
 */
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import http from 'node:http';
import net from 'node:net';
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { EngineSession } from '../../app/engine/session.ts';
import { CameraMemory } from '../../app/engine/memory.ts';
import { startServer, authorize, type RunningServer } from '../../app/serve/server.ts';
import { SOURCE_WORKER_URL, DEMO_FRAME } from '../../app/serve/sources.ts';

let server: RunningServer;
let session: EngineSession;

function request(opts: { path: string; method?: string; headers?: Record<string, string>; host?: string; body?: Buffer }): Promise<{ status: number; body: string; headers: http.IncomingHttpHeaders }> {
  return new Promise((resolve, reject) => {
    const req = http.request({ host: '127.0.0.1', port: server.port, path: opts.path, method: opts.method ?? 'GET', headers: { ...(opts.host ? { Host: opts.host } : {}), ...opts.headers } }, (res) => {
      const chunks: Buffer[] = [];
      res.on('data', (c: Buffer) => chunks.push(c));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, body: Buffer.concat(chunks).toString('utf8'), headers: res.headers }));
    });
    req.on('error', reject);
    req.end(opts.body);
  });
}

function connects(host: string, port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const s = net.connect({ host, port });
    s.once('connect', () => { s.destroy(); resolve(true); });
    s.once('error', () => resolve(false));
    s.setTimeout(2000, () => { s.destroy(); resolve(false); });
  });
}

beforeAll(async () => {
  session = new EngineSession({ workerUrl: SOURCE_WORKER_URL, demoPath: DEMO_FRAME, memory: new CameraMemory(null) });
  server = await startServer({ session, assets: { js: '/* page */', css: '/* style */' }, port: 0 });
});

afterAll(async () => {
  await server.close();
  await session.close();
});

describe('binding', () => {
  it('listens on 127.0.0.1 and nowhere else', async () => {
    expect(server.url).toMatch(new RegExp(`^http://127\\.0\\.0\\.1:${server.port}/\\?token=[0-9a-f]{64}$`));
    expect(await connects('127.0.0.1', server.port)).toBe(true);
    // another loopback address (same machine): a server bound to 0.0.0.0 would accept it
    expect(await connects('127.0.0.2', server.port)).toBe(false);
    // IPv6 loopback: not bound either
    expect(await connects('::1', server.port)).toBe(false);
  });
});

describe('token', () => {
  const routes: [string, string][] = [['GET', '/'], ['GET', '/index.html'], ['GET', '/app.js'], ['GET', '/app.css'], ['GET', '/api/config'],
    ['POST', '/api/analyze?name=a.fits'], ['POST', '/api/analyze-demo'], ['POST', '/api/cancel'], ['GET', '/api/export?id=abc&kind=json'], ['GET', '/nothing']];

  it('refuses every request without the token with 401', async () => {
    for (const [method, p] of routes) {
      const r = await request({ path: p, method, body: method === 'POST' ? Buffer.from('SIMPLE  =') : undefined });
      expect(r.status, `${method} ${p}`).toBe(401);
      expect(r.body).not.toContain('skyloupe-token');
    }
  });

  it('refuses a wrong token with 403, in the query or the header', async () => {
    const wrong = server.token.replace(/^./, (c) => (c === 'a' ? 'b' : 'a'));
    for (const [method, p] of routes) {
      const sep = p.includes('?') ? '&' : '?';
      expect((await request({ path: `${p}${sep}token=${wrong}`, method })).status, `${method} ${p}`).toBe(403);
      expect((await request({ path: p, method, headers: { 'X-Skyloupe-Token': wrong } })).status).toBe(403);
    }
    expect((await request({ path: '/?token=short' })).status).toBe(403);
  });

  it('refuses a request for another host name, token or not (DNS rebinding)', async () => {
    const r = await request({ path: `/?token=${server.token}`, host: `evil.example:${server.port}` });
    expect(r.status).toBe(403);
    expect(authorize({ headers: { host: `127.0.0.1:${server.port}` }, url: `/?token=${server.token}` }, server.token, server.port)).toBe('ok');
    expect(authorize({ headers: { host: `localhost:${server.port}` }, url: '/' }, server.token, server.port)).toBe(401);
  });

  it('serves the page with the token and a strict policy', async () => {
    const r = await request({ path: `/?token=${server.token}` });
    expect(r.status).toBe(200);
    const csp = String(r.headers['content-security-policy']);
    expect(csp).toContain("default-src 'none'");
    expect(csp).toContain("script-src 'self'");
    expect(csp).not.toContain('unsafe-inline');
    expect(csp).not.toContain('unsafe-eval');
    expect(r.body).toContain(`app.js?token=${server.token}`);
    const api = await request({ path: '/api/config', headers: { 'X-Skyloupe-Token': server.token } });
    expect(api.status).toBe(200);
    expect(JSON.parse(api.body).mode).toBe('browser');
  });

  it('has no route that reads a path on the server', async () => {
    const h = { 'X-Skyloupe-Token': server.token };
    for (const p of ['/api/open?path=/etc/passwd', '/../../etc/passwd', '/api/file?name=/etc/passwd', '/sample-data/demo-frame.fits']) {
      expect((await request({ path: p, headers: h })).status).toBe(404);
    }
    // the file name of an upload is only a name: its folders are dropped
    const r = await request({ path: '/api/analyze?name=%2Fetc%2Fpasswd', method: 'POST', headers: h, body: Buffer.from('not a frame') });
    const last = r.body.trim().split('\n').pop()!;
    const o = JSON.parse(last).outcome;
    expect(o.ok).toBe(false);
    expect(o.kind).toBe('unreadable');
    expect(o.message.startsWith('passwd:')).toBe(true);
  });
});

describe('skyloupe serve', () => {
  it('prints the URL with the token as its first line and keeps serving', async () => {
    const cfg = mkdtempSync(path.join(os.tmpdir(), 'skyloupe-serve-'));
    const child = spawn(process.execPath, ['bin/skyloupe.mjs', 'serve', '--port', '0', '--config-dir', cfg], { stdio: ['ignore', 'pipe', 'pipe'] });
    try {
      const first = await new Promise<string>((resolve, reject) => {
        let buf = '';
        child.stdout.on('data', (c: Buffer) => { buf += c.toString(); const nl = buf.indexOf('\n'); if (nl >= 0) resolve(buf.slice(0, nl)); });
        child.once('exit', (code) => reject(new Error(`serve exited ${code}`)));
        setTimeout(() => reject(new Error('no URL within 60 s')), 60_000);
      });
      expect(first).toMatch(/^http:\/\/127\.0\.0\.1:\d+\/\?token=[0-9a-f]{64}$/);
      const url = new URL(first);
      const res = await fetch(first);
      expect(res.status).toBe(200);
      expect((await fetch(`${url.origin}/`)).status).toBe(401);
    } finally {
      if (child.exitCode === null && child.signalCode === null) {
        const gone = new Promise((resolve) => child.once('exit', resolve));
        child.kill('SIGTERM');
        await gone;
      }
      rmSync(cfg, { recursive: true, force: true });
    }
  });

  it('refuses a bad port with a usage error (exit 2)', async () => {
    const child = spawn(process.execPath, ['bin/skyloupe.mjs', 'serve', '--port', 'x'], { stdio: ['ignore', 'pipe', 'pipe'] });
    let err = '';
    child.stderr.on('data', (c: Buffer) => { err += c.toString(); });
    const code = await new Promise<number | null>((resolve) => child.once('exit', resolve));
    expect(code).toBe(2);
    expect(err).toContain('--port needs a whole number');
  });
});
