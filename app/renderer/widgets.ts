/** Small controls and sizing shared by the views. */
import { $, h, setMarkup } from './dom.ts';
import type { FrameFile } from '../preload/bridge.ts';
import type { PageState } from './state.ts';

import { FRAME_EXTENSIONS } from '../../core/frame/extensions.ts';

/** Extensions the file pickers offer: everything the frame reader takes, camera raws included. */
export const ACCEPT = FRAME_EXTENSIONS.join(',');

export function button(id: string, label: string, title: string, extra: Record<string, string | boolean> = {}): HTMLButtonElement {
  return h('button', { id, type: 'button', title, ...extra }, label);
}

export function toolbar(...items: HTMLElement[]): HTMLElement {
  return h('div', { class: 'toolbar', role: 'toolbar' }, ...items);
}

export function radios(name: string, options: [string, string][], value: string, onChange: (v: string) => void): HTMLElement {
  const g = h('div', { class: 'radios', role: 'radiogroup', 'aria-label': name });
  for (const [v, label] of options) {
    const input = h('input', { type: 'radio', name, value: v, id: `${name}-${v}`, checked: v === value });
    input.addEventListener('change', () => onChange(v));
    g.append(h('label', { for: `${name}-${v}` }, input, ` ${label}`));
  }
  return g;
}

/**
 * Width of a figure in its own units: the view's width in rem x 16, so the figures' text
 * (11-14 units) grows with the page's font on large screens.
 */
export function figureWidth(): number {
  const rem = parseFloat(getComputedStyle(document.documentElement).fontSize) || 16;
  const w = (($('#view').clientWidth - 24) * 16) / rem;
  return Math.max(520, Math.min(w, 2400));
}

/** Let the figures in a holder scale to its width. */
export function fitFigure(holder: HTMLElement): void {
  for (const svg of holder.querySelectorAll('svg')) {
    svg.removeAttribute('height');
    svg.setAttribute('width', '100%');
  }
}

/** A view that needs a frame says so when there is none; true when there is one. */
export function needFrame(el: HTMLElement, state: PageState): boolean {
  if (state.current) return true;
  setMarkup(el, '<div class="empty"><p>No frame yet.</p><p>Drop a frame anywhere on this window, open one, or try the demo frame.</p></div>');
  return false;
}

export async function fileFrom(f: File): Promise<FrameFile> {
  return { name: f.name, bytes: await f.arrayBuffer() };
}
