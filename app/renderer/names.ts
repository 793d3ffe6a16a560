/** Reading numbers out of file names (pure, no DOM). */

/**
 * The spacer distance in a file name: "spacer-55.4mm.fits" -> 55.4, "back_-0.5 mm.fit" -> -0.5.
 * A minus right after a letter or digit separates words; after a space, "_", "=", "(" or at the
 * start it is a sign. null when no "<number> mm" is in the name.
 */
export function spacingFromName(name: string): number | null {
  const m = /(\d+(?:\.\d+)?)\s*mm/i.exec(name);
  if (!m) return null;
  const at = m.index;
  const minus = at > 0 && name[at - 1] === '-';
  const before = at > 1 ? name[at - 2] : '';
  const signed = minus && (before === '' || /[\s_=(]/.test(before));
  return (signed ? -1 : 1) * Number(m[1]);
}
