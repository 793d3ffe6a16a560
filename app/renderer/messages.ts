/** The message line and the progress bar. */
import type { Outcome, Progress } from '../preload/bridge.ts';
import { $ } from './dom.ts';
import { state } from './state.ts';
import { FRAME_KINDS_WORDS } from '../../core/frame/extensions.ts';

const STAGE_WORDS: Record<string, string> = {
  read: 'Reading the frame', background: 'Modelling the sky background', detect: 'Finding stars',
  measure: 'Measuring star shapes', field: 'Mapping the field', images: 'Drawing the previews', done: 'Done',
};

let messageTimer: ReturnType<typeof setTimeout> | undefined;

/** Errors stay until the next action; notes such as "Saved ..." go after a few seconds. */
export function showMessage(text: string | null, kind: 'error' | 'info' = 'error'): void {
  const m = $('#message');
  clearTimeout(messageTimer);
  if (!text) { m.hidden = true; m.textContent = ''; return; }
  m.hidden = false;
  m.className = `message message-${kind}`;
  m.textContent = text;
  if (kind === 'info') messageTimer = setTimeout(() => showMessage(null), 6000);
}

export function failureText(o: Extract<Outcome<unknown>, { ok: false }>): string {
  switch (o.kind) {
    case 'unreadable': return `This file cannot be read. ${o.message}. skyloupe reads ${FRAME_KINDS_WORDS} frames.`;
    case 'no-stars': return `No stars to measure. ${o.message}`;
    case 'cancelled': return 'Analysis stopped.';
    case 'usage': return o.message;
    case 'not-found': return o.message;
    default: return `Something went wrong: ${o.message}`;
  }
}

export function setBusy(busy: boolean): void {
  state.busy = busy;
  const p = $('#progress');
  p.hidden = !busy;
  if (busy) { ($('#progress-bar') as HTMLProgressElement).value = 0; $('#progress-label').textContent = 'Starting…'; }
  document.body.classList.toggle('busy', busy);
}

export function onProgress(p: Progress): void {
  ($('#progress-bar') as HTMLProgressElement).value = p.overall;
  $('#progress-label').textContent = `${STAGE_WORDS[p.stage] ?? p.stage}… ${Math.round(p.overall * 100)} %`;
}
