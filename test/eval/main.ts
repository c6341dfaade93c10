/** Entry point of `npm run eval` (options: see test/eval/run.ts). */
import fs from 'node:fs';
import path from 'node:path';
import { evaluate, formatReport, type EvalOptions } from './run.ts';

function parseArgs(argv: string[]): EvalOptions & { out: string; list: number } {
  const o: EvalOptions & { out: string; list: number } = { out: 'eval-output/eval.json', list: 6 };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    const next = () => {
      const v = argv[++i];
      if (v === undefined) throw new Error(`${a} needs a value`);
      return v;
    };
    if (a === '--fast') o.fast = true;
    else if (a === '--only') o.only = next().split(',');
    else if (a === '--split') o.split = next() as 'dev' | 'holdout';
    else if (a === '--match') o.match = next();
    else if (a === '--set') o.set = next() as 'clean' | 'impaired';
    else if (a === '--jobs') o.jobs = Number(next());
    else if (a === '--out') o.out = next();
    else if (a === '--list') o.list = Number(next());
    else if (a === '--no-corrections') o.corrections = false;
    else throw new Error(`unknown option ${a} (see the header of test/eval/run.ts)`);
  }
  return o;
}

const o = parseArgs(process.argv.slice(2));
const rep = await evaluate(o);
fs.mkdirSync(path.dirname(o.out), { recursive: true });
fs.writeFileSync(o.out, JSON.stringify(rep, null, 1));
process.stdout.write(formatReport(rep, o.list) + `\n\nJSON: ${o.out}\n`);
