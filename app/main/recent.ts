/** The recently opened frames (paths the user chose in a dialog), newest first, kept in a small JSON file. */
import { readFileSync, mkdirSync } from 'node:fs';
import path from 'node:path';
import { writeFileAtomic } from '../../core/report/save.ts';

export const MAX_RECENT = 10;

export class RecentFiles {
  private items: string[] = [];

  constructor(private readonly file: string | null, private readonly onAdd: (p: string) => void = () => {}) {
    if (!file) return;
    try {
      const raw = JSON.parse(readFileSync(file, 'utf8')) as { recent?: unknown };
      if (Array.isArray(raw.recent)) this.items = raw.recent.filter((p): p is string => typeof p === 'string' && path.isAbsolute(p)).slice(0, MAX_RECENT);
    } catch { /* none yet */ }
  }

  list(): string[] {
    return [...this.items];
  }

  async add(p: string): Promise<void> {
    const abs = path.resolve(p);
    this.items = [abs, ...this.items.filter((x) => x !== abs)].slice(0, MAX_RECENT);
    this.onAdd(abs);
    if (!this.file) return;
    mkdirSync(path.dirname(this.file), { recursive: true });
    await writeFileAtomic(this.file, JSON.stringify({ recent: this.items }, null, 2) + '\n');
  }
}
