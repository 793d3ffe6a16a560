/**
 * The page's HTML and its Content-Security-Policy, the same for the desktop window and for
 * browser mode: scripts and styles only from the page's own origin, no inline code, no remote
 * content; pictures only as data:/blob: URLs made by the program.
 */
import { esc } from '../core/report/svg/util.ts';

/** frame-ancestors only works as an HTTP header, so the meta copy leaves it out. */
export const PAGE_CSP_HEADER_EXTRA = "; frame-ancestors 'none'";

export const PAGE_CSP = [
  "default-src 'none'",
  "script-src 'self'",
  "style-src 'self'",
  "img-src 'self' data: blob:",
  "connect-src 'self'",
  "font-src 'none'",
  "object-src 'none'",
  "media-src 'none'",
  "frame-src 'none'",
  "worker-src 'none'",
  "base-uri 'none'",
  "form-action 'none'",
].join('; ');


/** `query` is appended to the asset URLs (browser mode: the token). */
export function pageHtml(opts: { query?: string; token?: string } = {}): string {
  const q = opts.query ?? '';
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="${PAGE_CSP}">
<meta name="viewport" content="width=device-width, initial-scale=1">
${opts.token ? `<meta name="skyloupe-token" content="${esc(opts.token)}">\n` : ''}<title>skyloupe</title>
<link rel="icon" href="data:,">
<link rel="stylesheet" href="app.css${esc(q)}">
<script src="app.js${esc(q)}" defer></script>
</head>
<body>
<noscript>skyloupe needs JavaScript to draw its views.</noscript>
</body>
</html>
`;
}
