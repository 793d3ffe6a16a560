/**
 * Errors that reach the user as one plain line. `code` maps to the CLI exit code
 * (usage 2, unreadable input 3, no usable stars 4).
 */
export type SkyloupeErrorKind = 'usage' | 'unreadable' | 'no-stars' | 'cancelled' | 'internal';

export class SkyloupeError extends Error {
  readonly kind: SkyloupeErrorKind;
  constructor(kind: SkyloupeErrorKind, message: string) {
    super(message);
    this.name = 'SkyloupeError';
    this.kind = kind;
  }
}

/** A file that cannot be decoded: truncated, malformed, unsupported or absurd. */
export function unreadable(message: string): SkyloupeError {
  return new SkyloupeError('unreadable', message);
}

export function usage(message: string): SkyloupeError {
  return new SkyloupeError('usage', message);
}

export function exitCodeFor(err: unknown): number {
  if (err instanceof SkyloupeError) {
    switch (err.kind) {
      case 'usage': return 2;
      case 'unreadable': return 3;
      case 'no-stars': return 4;
      case 'cancelled': return 130;
      default: return 1;
    }
  }
  return 1;
}
