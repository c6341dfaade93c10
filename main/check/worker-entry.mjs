// Entry point of a `reelwright check` worker thread: registers the TypeScript loader (tsx) inside
// the worker — `--import` in a Worker's execArgv is not honoured — then loads worker.ts.
import { register } from 'tsx/esm/api';

register();
await import(new URL('./worker.ts', import.meta.url).href);
