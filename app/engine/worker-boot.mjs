// Worker entry when running from TypeScript sources: load tsx, then the worker module.
import { register } from 'tsx/esm/api';

register();
await import('./worker.ts');
