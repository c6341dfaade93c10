// Entry point of a check process (main/check/thread.ts): registers the TypeScript loader (tsx),
// then loads worker.ts. The built command line replaces this file by the bundled worker.ts.
import { register } from 'tsx/esm/api';

register();
await import(new URL('./worker.ts', import.meta.url).href);
