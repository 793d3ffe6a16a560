/** The findings as text for the human summary of analyze: one block per finding, wrapped. */
import type { Finding } from './types.ts';

function wrap(text: string, width: number, indent: string): string {
  const words = text.split(/\s+/).filter(Boolean);
  const lines: string[] = [];
  let line = '';
  for (const w of words) {
    if (line && line.length + 1 + w.length > width) {
      lines.push(line);
      line = w;
    } else line = line ? `${line} ${w}` : w;
  }
  if (line) lines.push(line);
  return lines.map((l, i) => (i === 0 ? l : indent + l)).join('\n');
}

const TAG = { major: 'MAJOR', minor: 'minor', info: 'info ' } as const;

export function formatFindings(findings: readonly { severity: Finding['severity']; message: string }[], width = 92): string {
  if (findings.length === 0) return 'Findings: none';
  const lines = ['Findings:'];
  for (const f of findings) lines.push(`  ${TAG[f.severity] ?? f.severity}  ${wrap(f.message, width - 9, '         ')}`);
  return lines.join('\n');
}
