/**
 * Units as people read them on the page (µm, ±): some engine texts still write "um" and "+-"
 * (the command line's plain-ASCII spelling); the numbers are left as they are.
 */
export function peopleUnits(text: string): string {
  return text.replace(/(\d)\s*um\b/g, '$1 µm').replace(/\bum\b/g, 'µm').replace(/\s*\+-\s*/g, ' ± ');
}
