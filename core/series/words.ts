/** The severity words a person reads (the JSON keeps major / minor / info). */
export const SEVERITY_WORDS: Record<'major' | 'minor' | 'info', string> = { major: 'Act on it', minor: 'Worth a look', info: 'Note' };
