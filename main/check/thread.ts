/**
 * The processes that run the per-file check (worker.ts, started through worker-entry.mjs): the one
 * place that names the check's entry file, and a small pool for callers that hand out files one
 * at a time (the queue worker). `reelwright check` on one machine schedules its own check
 * processes (index.ts) with the same entry.
 *
 * Each check runs in a child process of its own started with V8's `--single-threaded`: garbage
 * collection and optimising compilation then run in the thread that does the check instead of on
 * helper threads beside it, so one check uses one core in total. Measured on a one-minute 96 kHz
 * stereo file: 12.0 s of CPU per file in a worker thread (9.9 s in the check thread, 2.1 s on V8's
 * helper threads) against 10.3 s in one thread this way — less work overall, and N checks on N
 * cores no longer compete for the same cores with their helpers. (A worker thread cannot have
 * its own V8 flags, and changing them in a running process is not safe.)
 */
import { fork, type ChildProcess } from 'node:child_process';
import { EventEmitter } from 'node:events';
import { fileURLToPath } from 'node:url';
import type { CheckJob, JobResult } from './check-file.ts';
import type { FromWorker, ToWorker } from './worker.ts';

/**
 * V8 flags of a check process (see the header). A 4 MB semi-space (young generation) instead of
 * V8's 16 MB default: the check's large arrays are typed-array stores outside the young heap, so
 * the smaller nursery costs no measurable CPU and takes about 50 MB off the process's peak.
 */
export const CHECK_PROCESS_FLAGS: readonly string[] = ['--single-threaded', '--max-semi-space-size=4'];

/**
 * One check process seen from the coordinator, with the few parts of a worker thread's interface
 * the callers use: `message` (FromWorker), `error`, `exit` (code), postMessage() and terminate().
 */
export class CheckThread extends EventEmitter {
  readonly #child: ChildProcess;
  readonly #exited: Promise<void>;

  constructor() {
    super();
    // Structured-clone messages (as between threads): NaN, undefined and typed arrays survive.
    this.#child = fork(fileURLToPath(new URL('./worker-entry.mjs', import.meta.url)), [], {
      execArgv: [...CHECK_PROCESS_FLAGS],
      serialization: 'advanced',
      stdio: ['ignore', 'inherit', 'inherit', 'ipc'],
    });
    this.#exited = new Promise<void>((resolve) => this.#child.once('exit', () => resolve()));
    this.#child.on('message', (m: FromWorker) => this.emit('message', m));
    this.#child.on('error', (e) => this.emit('error', e));
    this.#child.on('exit', (code, signal) => this.emit('exit', code ?? (signal ? `${signal}` : null)));
  }

  get pid(): number | undefined {
    return this.#child.pid;
  }

  postMessage(m: ToWorker): void {
    if (this.#child.connected) this.#child.send(m);
  }

  /**
   * Asks an idle process to end (it disconnects and exits normally, so its exit handlers run),
   * and stops it at once after `graceMs` if it has not; resolves when it has gone.
   */
  async stop(graceMs = 2000): Promise<void> {
    if (this.#child.exitCode !== null || this.#child.signalCode !== null) return this.#exited;
    this.postMessage({ type: 'stop' });
    let timer: ReturnType<typeof setTimeout> | undefined;
    await Promise.race([this.#exited, new Promise<void>((r) => (timer = setTimeout(r, graceMs)))]);
    clearTimeout(timer);
    await this.terminate();
  }

  /** Stops the process at once (a job in progress is dropped) and resolves when it has gone. */
  async terminate(): Promise<void> {
    if (this.#child.exitCode === null && this.#child.signalCode === null) this.#child.kill('SIGKILL');
    await this.#exited;
  }
}

/** A new check process. It posts `ready`, then takes one job at a time. */
export function newCheckThread(): CheckThread {
  return new CheckThread();
}

interface Slot {
  worker: CheckThread;
  ready: Promise<void>;
  busy: boolean;
  current?: { id: number; resolve: (r: JobResult) => void; reject: (e: Error) => void; onProgress?: (f: number) => void };
}

/**
 * `size` check processes; `run()` waits for a free one. One that dies (crash, out of memory)
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

  /** Resolves when every process has loaded (the first job does not pay for the start). */
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
      c?.reject(new Error(`the check process stopped (${why})`));
      if (slot.busy) this.#release(fresh);
    };
    worker.on('error', (e: Error) => died(e.message));
    worker.on('exit', (code: number | string | null) => died(`exit code ${code}`));
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
    if (this.#closed) throw new Error('the check process pool is closed');
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
