/**
 * The worker threads that run the per-file check (worker.ts, started through worker-entry.mjs):
 * the one place that names the thread's entry file, and a small pool for callers that hand out
 * files one at a time (the queue worker). `reelwright check` on one machine schedules its own
 * threads (index.ts) with the same entry.
 */
import { Worker } from 'node:worker_threads';
import type { CheckJob, JobResult } from './check-file.ts';
import type { FromWorker, ToWorker } from './worker.ts';

/** A new check thread. It posts `ready`, then takes one job at a time. */
export function newCheckThread(): Worker {
  return new Worker(new URL('./worker-entry.mjs', import.meta.url));
}

interface Slot {
  worker: Worker;
  ready: Promise<void>;
  busy: boolean;
  current?: { id: number; resolve: (r: JobResult) => void; reject: (e: Error) => void; onProgress?: (f: number) => void };
}

/**
 * `size` check threads; `run()` waits for a free one. A thread that dies (crash, out of memory)
 * rejects its job with an Error and is replaced.
 */
export class CheckThreadPool {
  readonly #slots: Slot[] = [];
  readonly #waiting: ((s: Slot) => void)[] = [];
  #nextId = 0;
  #closed = false;

  constructor(readonly size: number) {
    for (let i = 0; i < size; i++) this.#slots.push(this.#start());
  }

  /** Resolves when every thread has loaded (the first job does not pay for the start). */
  async ready(): Promise<void> {
    await Promise.all(this.#slots.map((s) => s.ready));
  }

  #start(): Slot {
    const worker = newCheckThread();
    let markReady!: () => void;
    const slot: Slot = { worker, busy: false, ready: new Promise<void>((r) => (markReady = r)) };
    worker.on('message', (m: FromWorker) => {
      if (m.type === 'ready') markReady();
      else if (m.type === 'progress') slot.current?.onProgress?.(m.fraction);
      else if (m.type === 'result' && slot.current?.id === m.id) {
        const c = slot.current;
        slot.current = undefined;
        this.#release(slot);
        c.resolve(m.result);
      }
    });
    const died = (why: string) => {
      const i = this.#slots.indexOf(slot);
      if (i < 0) return;
      markReady();
      const c = slot.current;
      slot.current = undefined;
      if (this.#closed) return;
      const fresh = this.#start();
      this.#slots[i] = fresh;
      c?.reject(new Error(`the check thread stopped (${why})`));
      if (slot.busy) this.#release(fresh);
    };
    worker.on('error', (e) => died(e.message));
    worker.on('exit', (code) => died(`exit code ${code}`));
    return slot;
  }

  #release(slot: Slot): void {
    slot.busy = false;
    const next = this.#waiting.shift();
    if (next) {
      slot.busy = true;
      next(slot);
    }
  }

  async run(job: CheckJob, onProgress?: (fraction: number) => void): Promise<JobResult> {
    if (this.#closed) throw new Error('the check thread pool is closed');
    const free = this.#slots.find((s) => !s.busy);
    let slot: Slot;
    if (free) {
      free.busy = true;
      slot = free;
    } else slot = await new Promise<Slot>((r) => this.#waiting.push(r));
    await slot.ready;
    if (!this.#slots.includes(slot)) return this.run(job, onProgress); // it died while starting
    return new Promise<JobResult>((resolve, reject) => {
      const id = this.#nextId++;
      slot.current = { id, resolve, reject, onProgress };
      slot.worker.postMessage({ type: 'job', id, job } satisfies ToWorker);
    });
  }

  async close(): Promise<void> {
    this.#closed = true;
    await Promise.all(this.#slots.map((s) => s.worker.terminate()));
  }
}
