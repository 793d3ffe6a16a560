/**
 * Browser mode's bridge: the SkyloupeBridge interface over fetch to app/serve, every request
 * carrying the run's token in a header. Exports and PNGs become downloads.
 */
import type {
  AnalysisResult, AppConfig, CompareResult, ExportKind, FrameFile, MenuCommand, OpticsInput, Outcome, Progress,
  SavedFile, SkyloupeBridge, StampData, SweepResult, FocusPairResult,
} from '../preload/bridge.ts';

const TOKEN_HEADER = 'X-Skyloupe-Token';

function download(blob: Blob, filename: string): void {
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = filename;
  a.rel = 'noopener';
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}

function failure<T>(message: string): Outcome<T> {
  return { ok: false, kind: 'internal', message };
}

export function httpBridge(token: string): SkyloupeBridge {
  const listeners = new Set<(p: Progress) => void>();
  const headers = { [TOKEN_HEADER]: token };

  async function json<T>(path: string, init: RequestInit = {}): Promise<T> {
    const res = await fetch(path, { ...init, headers: { ...headers, ...(init.headers ?? {}) } });
    return (await res.json()) as T;
  }

  async function outcome<T>(path: string, init: RequestInit = {}): Promise<Outcome<T>> {
    try {
      return await json<Outcome<T>>(path, init);
    } catch (err) {
      return failure(`the program is not answering (${err instanceof Error ? err.message : String(err)})`);
    }
  }

  /** Reads the newline-delimited progress lines and the final outcome of an analysis. */
  async function streamed(path: string, body?: ArrayBuffer): Promise<Outcome<AnalysisResult>> {
    let res: Response;
    try {
      // a Blob body uploads off the main thread; an ArrayBuffer body blocks the page for seconds
      // on a large frame (measured: 48 MB, 3-5 s frozen with Chromium 156)
      res = await fetch(path, { method: 'POST', headers: { ...headers, 'Content-Type': 'application/octet-stream' }, body: body ? new Blob([body]) : undefined });
    } catch (err) {
      return failure(`the program is not answering (${err instanceof Error ? err.message : String(err)})`);
    }
    if (!res.ok || !res.body) {
      try { return (await res.json()) as Outcome<AnalysisResult>; } catch { return failure(`request refused (${res.status})`); }
    }
    const reader = res.body.getReader();
    const dec = new TextDecoder();
    let buf = '';
    let result: Outcome<AnalysisResult> | null = null;
    for (;;) {
      const { value, done } = await reader.read();
      if (value) buf += dec.decode(value, { stream: true });
      let nl: number;
      while ((nl = buf.indexOf('\n')) >= 0) {
        const line = buf.slice(0, nl);
        buf = buf.slice(nl + 1);
        if (!line.trim()) continue;
        const msg = JSON.parse(line) as { type: 'progress'; progress: Progress } | { type: 'outcome'; outcome: Outcome<AnalysisResult> };
        if (msg.type === 'progress') for (const cb of listeners) cb(msg.progress);
        else result = msg.outcome;
      }
      if (done) break;
    }
    return result ?? failure('the analysis ended without a result');
  }

  const q = (o?: OpticsInput) => (o ? `optics=${encodeURIComponent(JSON.stringify(o))}` : '');

  return {
    config: () => json<AppConfig>('/api/config'),
    analyze: (file: FrameFile, optics?: OpticsInput) => streamed(`/api/analyze?name=${encodeURIComponent(file.name)}&${q(optics)}`, file.bytes),
    analyzeDemo: (optics?: OpticsInput) => streamed(`/api/analyze-demo?${q(optics)}`),
    onProgress(cb) {
      listeners.add(cb);
      return () => listeners.delete(cb);
    },
    async cancel() {
      await fetch('/api/cancel', { method: 'POST', headers });
    },
    stamp: (id: string, i: number) => outcome<StampData>(`/api/stamp?id=${encodeURIComponent(id)}&i=${i}`),
    compare: (a: string, b: string) => outcome<CompareResult>('/api/compare', { method: 'POST', body: JSON.stringify({ a, b }), headers: { 'Content-Type': 'application/json' } }),
    sweep: (points) => outcome<SweepResult>('/api/sweep', { method: 'POST', body: JSON.stringify({ points }), headers: { 'Content-Type': 'application/json' } }),
    forgetOptics: (camera) => outcome<null>('/api/forget-optics', { method: 'POST', body: JSON.stringify({ camera }), headers: { 'Content-Type': 'application/json' } }),
    focusPair: (a, b, stepUm) => outcome<FocusPairResult>('/api/focus-pair', { method: 'POST', body: JSON.stringify({ a, b, stepUm }), headers: { 'Content-Type': 'application/json' } }),
    async exportReport(id: string, kind: ExportKind): Promise<Outcome<SavedFile>> {
      try {
        const res = await fetch(`/api/export?id=${encodeURIComponent(id)}&kind=${kind}`, { headers });
        if (!res.ok) return (await res.json()) as Outcome<SavedFile>;
        const filename = decodeURIComponent(res.headers.get('X-Skyloupe-Filename') ?? `skyloupe.${kind}`);
        download(await res.blob(), filename);
        return { ok: true, value: { saved: true, filename } };
      } catch (err) {
        return failure(`export failed (${err instanceof Error ? err.message : String(err)})`);
      }
    },
    async savePng(filename: string, bytes: ArrayBuffer): Promise<Outcome<SavedFile>> {
      download(new Blob([bytes], { type: 'image/png' }), filename);
      return { ok: true, value: { saved: true, filename } };
    },
    openFileDialog: async () => null,
    onCommand: (_cb: (cmd: MenuCommand, file?: FrameFile) => void) => () => {},
  };
}
