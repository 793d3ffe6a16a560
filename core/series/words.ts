/** The severity words a person reads (the JSON keeps major / minor / info): one table, core/report/words.ts. */
export { SEVERITY_WORDS } from '../report/words.ts';
