/** The page's side of a worker: jobs with progress and cancel, and the byte relay to the bridge. */
import type { Bridge } from '../../../main/bridge/contract.ts';
import type { FromWorker, Job, JobResults, ToWorker } from '../worker/protocol.ts';

export interface Task<T> {
  readonly promise: Promise<T>;
  cancel(): void;
}

export class JobError extends Error {
  constructor(readonly kind: string, message: string) {
    super(message);
    this.name = kind;
  }
  get cancelled(): boolean {
    return this.kind === 'CancelledError' || this.kind === 'Superseded';
  }
  /** The worker was stopped because another recording replaced its own: nothing to report. */
  get superseded(): boolean {
    return this.kind === 'Superseded';
  }
}

type Pending = {
  resolve: (v: unknown) => void;
  reject: (e: Error) => void;
  progress?: (fraction: number, label: string) => void;
  warn?: (message: string) => void;
};

export class Engine {
  readonly #worker: Worker;
  readonly #pending = new Map<number, Pending>();
  #next = 0;

  constructor(private readonly bridge: Bridge, name: string) {
    this.#worker = new Worker(new URL('../worker/engine.worker.ts', import.meta.url), { type: 'module', name });
    this.#worker.onmessage = (e: MessageEvent<FromWorker>) => this.#receive(e.data);
    this.#worker.onerror = (e) => {
      for (const p of this.#pending.values()) p.reject(new JobError('WorkerError', e.message || 'the worker stopped'));
      this.#pending.clear();
    };
  }

  run<K extends Job['type']>(
    job: Extract<Job, { type: K }>,
    opts: { progress?: (fraction: number, label: string) => void; warn?: (m: string) => void; transfer?: Transferable[] } = {},
  ): Task<JobResults[K]> {
    const id = ++this.#next;
    if (this.#closed) return { promise: Promise.reject(new JobError('Superseded', 'another recording was opened')), cancel: () => {} };
    const promise = new Promise<JobResults[K]>((resolve, reject) => {
      this.#pending.set(id, { resolve: resolve as (v: unknown) => void, reject, progress: opts.progress, warn: opts.warn });
    });
    this.#post({ kind: 'job', id, job }, opts.transfer ?? []);
    return { promise, cancel: () => this.#post({ kind: 'cancel', id }) };
  }

  /** Stops the worker; every job still running ends at once (rejected as superseded), so no progress bar outlives it. */
  terminate(): void {
    this.#worker.terminate();
    this.#closed = true;
    for (const p of this.#pending.values()) p.reject(new JobError('Superseded', 'another recording was opened'));
    this.#pending.clear();
  }

  get closed(): boolean {
    return this.#closed;
  }
  #closed = false;

  #post(m: ToWorker, transfer: Transferable[] = []) {
    this.#worker.postMessage(m, transfer);
  }

  #receive(m: FromWorker): void {
    switch (m.kind) {
      case 'done': {
        const p = this.#pending.get(m.id);
        this.#pending.delete(m.id);
        p?.resolve(m.result);
        break;
      }
      case 'failed': {
        const p = this.#pending.get(m.id);
        this.#pending.delete(m.id);
        p?.reject(new JobError(m.name, m.message));
        break;
      }
      case 'progress':
        this.#pending.get(m.id)?.progress?.(m.fraction, m.label);
        break;
      case 'warn':
        this.#pending.get(m.id)?.warn?.(m.message);
        break;
      case 'read':
        this.bridge.readBytes(m.handle, m.offset, m.length).then(
          (buf) => this.#post({ kind: 'bytes', rid: m.rid, buf }, [buf]),
          (err: unknown) => this.#post({ kind: 'bytes', rid: m.rid, error: err instanceof Error ? err.message : String(err) }),
        );
        break;
      case 'write':
        this.bridge.writeExport(m.handle, m.bytes, m.atOffset).then(
          () => this.#post({ kind: 'wrote', rid: m.rid }),
          (err: unknown) => this.#post({ kind: 'wrote', rid: m.rid, error: err instanceof Error ? err.message : String(err) }),
        );
        break;
    }
  }
}
