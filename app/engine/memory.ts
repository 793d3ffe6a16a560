/**
 * Optics remembered per camera (the form's values), kept in a small JSON file so that the
 * next frame from the same camera needs no typing. A missing or damaged file is an empty memory.
 */
import { readFileSync, mkdirSync } from 'node:fs';
import path from 'node:path';
import { writeFileAtomic } from '../../core/report/save.ts';
import { optics as checkOptics } from './validate.ts';
import type { OpticsInput } from '../preload/bridge.ts';

const MAX_CAMERAS = 200;

export class CameraMemory {
  private cams: Record<string, OpticsInput> = {};
  /** `file` null keeps the memory for this run only. */
  constructor(private readonly file: string | null) {
    if (!file) return;
    try {
      const raw = JSON.parse(readFileSync(file, 'utf8')) as { cameras?: Record<string, unknown> };
      for (const [k, v] of Object.entries(raw.cameras ?? {})) {
        try { const o = checkOptics(v); if (o) this.cams[k] = o; } catch { /* skip a bad entry */ }
      }
    } catch { /* no memory yet */ }
  }

  all(): Record<string, OpticsInput> {
    return { ...this.cams };
  }

  /** What is remembered for one camera, or null. */
  get(camera: string): OpticsInput | null {
    return this.cams[camera] ? { ...this.cams[camera] } : null;
  }

  async forget(camera: string): Promise<void> {
    if (!(camera in this.cams)) return;
    delete this.cams[camera];
    await this.save();
  }

  async remember(camera: string, o: OpticsInput): Promise<void> {
    this.cams[camera] = { ...this.cams[camera], ...o };
    const keys = Object.keys(this.cams);
    if (keys.length > MAX_CAMERAS) delete this.cams[keys[0]];
    await this.save();
  }

  private async save(): Promise<void> {
    if (!this.file) return;
    mkdirSync(path.dirname(this.file), { recursive: true });
    await writeFileAtomic(this.file, JSON.stringify({ schema: 'skyloupe.cameras/1', cameras: this.cams }, null, 2) + '\n');
  }
}

/** $XDG_CONFIG_HOME/skyloupe (or ~/.config/skyloupe), overridden by SKYLOUPE_CONFIG_DIR. */
export function defaultConfigDir(env: NodeJS.ProcessEnv = process.env, home = env.HOME ?? '.'): string {
  if (env.SKYLOUPE_CONFIG_DIR) return env.SKYLOUPE_CONFIG_DIR;
  return path.join(env.XDG_CONFIG_HOME || path.join(home, '.config'), 'skyloupe');
}
