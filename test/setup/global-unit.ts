/**
 * Global setup of the unit project: the Debian programs the tests need are installed once (as
 * root through apt, else the run stops with one line naming them) and the real-material quick
 * slice is built once, before test files run in parallel (two files building it at once would
 * write the same files).
 */
import { REDIS, ensureTool } from './system-tools.ts';
import { loadCorpus } from '../corpus/index.ts';

export async function setup(): Promise<void> {
  ensureTool(REDIS);
  await loadCorpus({ fast: true, quiet: true });
}
