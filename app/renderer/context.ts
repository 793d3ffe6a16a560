/**
 * What a view receives when it draws: the shared state and the page's actions. main.ts builds
 * the one context; views import no other view and never main.ts (no import cycles).
 */
import type { Theme } from '../../core/report/svg/index.ts';
import type { AnalysisResult, Outcome, SkyloupeBridge } from '../preload/bridge.ts';
import type { FrameSource, PageState } from './state.ts';

export interface ViewContext {
  state: PageState;
  bridge: SkyloupeBridge;
  theme(): Theme;
  /** Draw the current view again (after its own controls changed something). */
  rerender(): void;
  switchView(name: string, focusTab?: boolean): void;
  /** Analyse a frame without making it the current one (compare, sweep); null on failure (the message is shown). */
  analyse(source: FrameSource): Promise<AnalysisResult | null>;
  /** Analyse a frame and make it the current one. */
  openMain(source: FrameSource): Promise<void>;
  showMessage(text: string | null, kind?: 'error' | 'info'): void;
  failureText(o: Extract<Outcome<unknown>, { ok: false }>): string;
  selectStar(i: number | null): void;
  /** Show the optics fields (what is in use, where it came from) and put the cursor in them. */
  openOptics(): void;
}

/** One view of the page: a tab, a key, and a function that fills the #view pane. */
export interface View {
  name: string;
  label: string;
  /** Keyboard key that switches to it ("1" ...). */
  key: string;
  render(el: HTMLElement, ctx: ViewContext): void;
}
