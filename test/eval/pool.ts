/** A few child processes that each run tasks one at a time (JSON lines over stdin/stdout). */
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import readline from 'node:readline';

const ROOT = path.resolve(import.meta.dirname, '../..');

/**
 * Numbers for a JSON line: JSON has no NaN or ±Infinity (JSON.stringify writes null), so those
 * travel by name ("NaN", "Infinity", "-Infinity"); `numbersFromJson` reads them back.
 */
export function numbersToJson(values: Record<string, number>): Record<string, number | string> {
  return Object.fromEntries(Object.entries(values).map(([k, v]) => [k, Number.isFinite(v) ? v : String(v)]));
}

export function numbersFromJson(values: Record<string, number | string>): Record<string, number> {
  return Object.fromEntries(Object.entries(values).map(([k, v]) => [k, Number(v)]));
}

export class TaskPool<T extends { id: string }, R extends { id: string }> {
  private readonly children: ChildProcess[] = [];
  private readonly waiting = new Map<string, (r: R) => void>();
  private readonly idle: ChildProcess[] = [];
  private readonly queue: { task: T; resolve: (r: R) => void }[] = [];

  constructor(script: string, size: number) {
    for (let i = 0; i < size; i++) {
      const child = spawn(process.execPath, [path.join(ROOT, 'bin/run-ts.mjs'), script], { cwd: ROOT, stdio: ['pipe', 'pipe', 'inherit'] });
      readline.createInterface({ input: child.stdout! }).on('line', (line) => {
        const r = JSON.parse(line) as R;
        const done = this.waiting.get(r.id);
        this.waiting.delete(r.id);
        this.idle.push(child);
        this.pump();
        done?.(r);
      });
      this.children.push(child);
      this.idle.push(child);
    }
  }

  run(task: T): Promise<R> {
    return new Promise((resolve) => {
      this.queue.push({ task, resolve });
      this.pump();
    });
  }

  private pump(): void {
    while (this.idle.length && this.queue.length) {
      const child = this.idle.pop()!;
      const { task, resolve } = this.queue.shift()!;
      this.waiting.set(task.id, resolve);
      child.stdin!.write(JSON.stringify(task) + '\n');
    }
  }

  close(): void {
    for (const c of this.children) c.stdin!.end();
  }
}
