/** The findings as text for the human summary of analyze: one block per finding, wrapped. */
import type { Finding } from './types.ts';
import { SEVERITY_WORDS, bySeverity, severityWord } from '../report/words.ts';

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

const TAG_WIDTH = Math.max(...Object.values(SEVERITY_WORDS).map((w) => w.length));

/** The findings under the severity scale's words ("Act on it", "Worth a look", "Note"), most urgent first. */
export function formatFindings(findings: readonly { severity: Finding['severity']; message: string }[], width = 92): string {
  if (findings.length === 0) return 'Findings: none';
  const lines = ['Findings:'];
  const indent = ' '.repeat(2 + TAG_WIDTH + 2);
  for (const f of bySeverity(findings)) lines.push(`  ${severityWord(f.severity).padEnd(TAG_WIDTH)}  ${wrap(f.message, width - indent.length, indent)}`);
  return lines.join('\n');
}
