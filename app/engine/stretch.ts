/** The display stretch lives in core (the CLI's HTML report uses it too). */
export * from '../../core/image/stretch.ts';
