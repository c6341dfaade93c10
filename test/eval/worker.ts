/**
 * A child process of `npm run eval`: reads one JSON task per line on stdin, answers one JSON line
 * per task on stdout. `diagnose` runs every analysis with default settings, as a new user would.
 */
import readline from 'node:readline';
import { openAudio } from '../../main/io/reader.ts';
import { diagnose } from '../../dsp/ops/diagnose.ts';
import type { ClipResult } from './types.ts';

export interface DiagnoseTask {
  task: 'diagnose';
  id: string;
  file: string;
  params?: Record<string, Record<string, unknown>>;
  /** Only these analysis verbs. */
  only?: string[];
}

async function run(t: DiagnoseTask): Promise<ClipResult> {
  const c0 = process.cpuUsage();
  const cpu = () => { const c = process.cpuUsage(c0); return (c.user + c.system) / 1e6; };
  let file;
  try {
    file = await openAudio(t.file);
    const r = await diagnose(file, { progress() {}, warn() {} }, { params: t.params as never, only: t.only });
    return { id: t.id, sections: r.sections, findings: r.findings, notes: r.notes, cpuSeconds: cpu() };
  } catch (e) {
    return { id: t.id, sections: {}, findings: [], notes: [], cpuSeconds: cpu(), error: e instanceof Error ? `${e.name}: ${e.message}` : String(e) };
  } finally {
    await file?.close().catch(() => {});
  }
}

const rl = readline.createInterface({ input: process.stdin });
for await (const line of rl) {
  if (!line.trim()) continue;
  const t = JSON.parse(line) as DiagnoseTask;
  process.stdout.write(JSON.stringify(await run(t)) + '\n');
}
