/** `npm run corpus [-- --fast]`: builds (or brings up to date) the real-material corpus. */
import { loadCorpus } from './index.ts';

const fast = process.argv.includes('--fast');
const c = await loadCorpus({ fast });
process.stdout.write(`${c.clips.length} clips in ${c.dir}\n`);
