/**
 * `reelwright report --queue URL --batch NAME [--report r.html] [--json r.json] [--csv r.csv]
 *  [--manifest FILE | --write-manifest FILE] [--quiet]`: the reports of a queued batch, the same
 * three as `check` writes on one machine, with the same exit gate (0, or 1 when any file fails its
 * thresholds or could not be read — a file not checked yet counts as not readable). The
 * thresholds are those of the batch's last enqueue.
 */
import { Queue } from 'bullmq';
import { ParameterError } from '../../../dsp/errors.ts';
import { reportError } from '../../cli/shared.ts';
import { finishCheck, parseCheckSetup } from '../common.ts';
import { connect, hideCommandLine, parseQueueUrl, scrub, type QueueTarget } from './connection.ts';
import { checkBatchName, PREFIX, QUEUE_NAME, readMeta } from './store.ts';
import { batchEntries } from './batch.ts';

const USAGE = `reelwright report --queue redis://HOST:PORT/DB --batch NAME [options]

Writes the reports of a batch queued with \`reelwright check PATH… --queue URL --batch NAME\`: the
same HTML, JSON and CSV as \`check\` on one machine. Exit status 1 when any file fails its
thresholds, could not be read or is not checked yet.

Options:
  --report FILE.html  --json FILE.json  --csv FILE.csv
  --manifest FILE             Verify a SHA-256 manifest against the checked files (see \`check --help\`).
  --write-manifest FILE       Write one (never replaces a file).`;

export interface ReportOptions {
  out?: (s: string) => void;
  err?: (s: string) => void;
}

export async function runQueueReport(argv: string[], options: ReportOptions = {}): Promise<number> {
  const out = options.out ?? ((s: string) => void process.stdout.write(s.endsWith('\n') ? s : s + '\n'));
  const err = options.err ?? ((s: string) => void process.stderr.write(s.endsWith('\n') ? s : s + '\n'));
  let target: QueueTarget | undefined;
  try {
    const setup = parseCheckSetup(argv, { values: ['queue', 'batch'] });
    if (setup === 'help') {
      out(USAGE);
      return 0;
    }
    const { args, str } = setup;
    const url = str('queue');
    if (url === undefined) throw new ParameterError('--queue URL is required (usage: reelwright report --queue redis://HOST:PORT/DB --batch NAME)');
    target = parseQueueUrl(url);
    hideCommandLine(target, 'report');
    const batch = checkBatchName(str('batch'));
    if (args.positionals.length) throw new ParameterError(`unexpected argument ${args.positionals[0]} (the batch's files come from the queue)`);
    for (const f of ['jobs', 'resume', 'thresholds']) {
      if (args.flags.has(f)) throw new ParameterError(`--${f} does not apply to report (the batch keeps the thresholds it was enqueued with)`);
    }
    const t = target;
    const say = (s: string) => out(scrub(s, t));
    const redis = await connect(t, 'client', (s) => err(scrub(s, t)));
    const queue = new Queue(QUEUE_NAME, { connection: redis, prefix: PREFIX });
    try {
      const meta = await readMeta(redis, batch);
      if (!meta) throw new ParameterError(`no batch "${batch}" on the queue at ${t.display} (never enqueued, or its time to live has passed)`);
      const { entries, pending, seconds } = await batchEntries(redis, queue, batch, meta);
      if (pending.length) err(`reelwright report: ${pending.length} of ${entries.length} files of batch ${batch} are not checked yet; they are listed as not checked`);
      return finishCheck(entries, { paths: meta.paths, thresholds: meta.thresholds, seconds, outputs: setup.outputs, batch }, say);
    } finally {
      await queue.close().catch(() => {});
      redis.disconnect();
    }
  } catch (e) {
    if (e instanceof Error) e.message = scrub(e.message, target);
    return reportError('report', e);
  }
}
