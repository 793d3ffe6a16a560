/**
 * `skyloupe serve [--port N] [--demo]`: browser mode. The first line printed is the page's URL
 * with the token; it serves until stopped (Ctrl-C).
 */
import path from 'node:path';
import { parse } from '../../core/cli/args.ts';
import { SkyloupeError, exitCodeFor, usage } from '../../core/errors.ts';
import { EngineSession } from '../engine/session.ts';
import { CameraMemory, defaultConfigDir } from '../engine/memory.ts';
import { pageAssets } from '../build.ts';
import { startServer } from './server.ts';
import { DEMO_FRAME, SOURCE_WORKER_URL } from './sources.ts';

export const HELP_SERVE = `usage: skyloupe serve [options]

Serves the desktop program's page on http://127.0.0.1 for a web browser (browser mode).
The first line printed is the page's address, with the access token for this run; every
request without the token is refused. Frames are uploaded from the page. Stop with Ctrl-C.

options:
  --port N         port to listen on (default 0: any free port)
  --demo           open the built-in demo frame when the page loads
  --config-dir DIR where optics entered per camera are remembered
                   (default $SKYLOUPE_CONFIG_DIR, else ~/.config/skyloupe)
  -h, --help       this text`;

export async function serveMain(argv: string[], out: (s: string) => void = (s) => process.stdout.write(s + '\n')): Promise<number> {
  try {
    const { values, positionals } = parse(argv, {
      port: { type: 'string' },
      demo: { type: 'boolean' },
      'config-dir': { type: 'string' },
    }, 'serve');
    if (values.help) { out(HELP_SERVE); return 0; }
    if (positionals.length) throw usage('serve: takes no file arguments (frames are opened from the page; see skyloupe serve --help)');
    const portText = values.port as string | undefined;
    const port = portText === undefined ? 0 : Number(portText);
    if (!Number.isInteger(port) || port < 0 || port > 65535 || (portText !== undefined && portText.trim() === '')) {
      throw usage(`serve: --port needs a whole number from 0 to 65535, got "${portText}"`);
    }
    const configDir = (values['config-dir'] as string | undefined) ?? defaultConfigDir();
    const session = new EngineSession({
      workerUrl: SOURCE_WORKER_URL,
      demoPath: DEMO_FRAME,
      memory: new CameraMemory(path.join(configDir, 'cameras.json')),
    });
    const assets = await pageAssets();
    let server;
    try {
      server = await startServer({ session, assets, port, openDemo: !!values.demo });
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code;
      throw usage(`serve: cannot listen on 127.0.0.1:${port} (${code ?? (err as Error).message})`);
    }
    out(server.url);
    await new Promise<void>((resolve) => {
      const stop = () => resolve();
      process.once('SIGINT', stop);
      process.once('SIGTERM', stop);
    });
    await server.close();
    await session.close();
    return 0;
  } catch (err) {
    const msg = err instanceof SkyloupeError ? err.message : `internal error: ${err instanceof Error ? err.message : String(err)}`;
    process.stderr.write(`skyloupe: ${msg}\n`);
    return exitCodeFor(err);
  }
}
