/**
 * Decode once, analyse many times. Wraps a source so that analyses running at the same time can
 * share one sequential pass over it: every full forward pass (`blocks()` with no range, no
 * reversal, default block size) that starts before the shared pass has produced its first block
 * joins it and receives the same blocks in lockstep; any other read (ranges, reversed passes,
 * passes that start later) goes straight to the underlying source. Consumers that asked for
 * `readOnly` blocks share one instance of each block; every other consumer gets its own copy
 * ("yielded arrays belong to the caller"), except that the original goes to the last of them
 * when no read-only consumer shares it.
 *
 * At most MAX_AHEAD blocks wait in any consumer's queue: the pass pauses until the slowest
 * consumer catches up, so memory stays at a few blocks whatever the file's length. Blocks are
 * shorter than 65536 frames when there are more than two channels (defaultBlockFrames),
 * so it also stays a few MiB whatever the channel count; consumers take blocks of any length.
 */
import { DEFAULT_BLOCK_FRAMES, defaultBlockFrames, type AudioSource, type Block, type BlockOptions } from './source.ts';

/** The host's timer (Node, browsers and workers all have one; ES2022's lib does not declare it). */
const nextTurn = (): Promise<void> =>
  new Promise((resolve) => {
    const timer = (globalThis as { setTimeout?: (f: () => void, ms: number) => unknown }).setTimeout;
    if (timer) timer(resolve, 0);
    else resolve();
  });

const MAX_AHEAD = 3;

interface Consumer {
  queue: Block[];
  wake: (() => void) | null;
  readOnly: boolean;
}

export class SharedPass {
  readonly #inner: AudioSource;
  readonly #consumers = new Set<Consumer>();
  #iterator: AsyncIterator<Block> | null = null;
  #produced = 0;
  #finished = false;
  #error: unknown = null;
  #reading: Promise<void> | null = null;
  #startGate: Promise<void> | null = null;
  /** Statistics: consumers served by the shared pass, and passes that had to read on their own. */
  joined = 0;
  separatePasses = 0;

  readonly #blockFrames: number;

  /** @param blockFrames frames per shared block (default: defaultBlockFrames(channels)) */
  constructor(inner: AudioSource, blockFrames = defaultBlockFrames(inner.channelCount)) {
    this.#inner = inner;
    this.#blockFrames = blockFrames;
  }

  /** A source with the same facts (and any extra properties) whose full passes share decoding. */
  source<S extends AudioSource>(): S {
    const inner = this.#inner as S;
    const shared = this;
    return new Proxy(inner, {
      get(target, prop, receiver) {
        if (prop === 'blocks') return (options?: BlockOptions) => shared.blocks(options);
        const v = Reflect.get(target, prop, receiver) as unknown;
        return typeof v === 'function' ? (v as (...a: unknown[]) => unknown).bind(target) : v;
      },
    });
  }

  blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const full =
      !options.reverse &&
      (options.startFrame === undefined || options.startFrame <= 0) &&
      (options.endFrame === undefined || options.endFrame >= this.#inner.frames) &&
      (options.blockFrames === undefined || options.blockFrames === DEFAULT_BLOCK_FRAMES);
    if (!full) return this.#inner.blocks(options);
    return {
      // Join when the iteration starts (not when blocks() is called), if the pass has not begun.
      [Symbol.asyncIterator]: () => {
        if (this.#produced > 0 || this.#finished) {
          this.separatePasses++;
          return this.#inner.blocks(options)[Symbol.asyncIterator]();
        }
        const c: Consumer = { queue: [], wake: null, readOnly: options.readOnly === true };
        this.#consumers.add(c);
        this.joined++;
        return this.#iteratorFor(c);
      },
    };
  }

  #iteratorFor(c: Consumer): AsyncIterator<Block> {
    const leave = () => {
      c.queue.length = 0;
      this.#consumers.delete(c);
      this.#wakeAll();
    };
    return {
      next: async (): Promise<IteratorResult<Block>> => {
        for (;;) {
          if (c.queue.length) {
            const b = c.queue.shift()!;
            this.#wakeAll(); // a producer may be waiting for room
            return { value: b, done: false };
          }
          if (this.#error !== null) throw this.#error;
          if (this.#finished) {
            leave();
            return { value: undefined, done: true };
          }
          await this.#produce();
        }
      },
      return: async (): Promise<IteratorResult<Block>> => {
        leave();
        return { value: undefined, done: true };
      },
    };
  }

  #wakeAll(): void {
    for (const c of this.#consumers) {
      const w = c.wake;
      c.wake = null;
      w?.();
    }
  }

  /** Reads one more block for everyone (one read at a time), waiting while a consumer is full. */
  async #produce(): Promise<void> {
    if (this.#reading) return this.#reading;
    this.#reading = (async () => {
      try {
        if (!this.#startGate) {
          // Let the other analyses started together reach their first read and join.
          this.#startGate = nextTurn();
        }
        await this.#startGate;
        while ([...this.#consumers].some((c) => c.queue.length >= MAX_AHEAD)) {
          await new Promise<void>((r) => {
            const full = [...this.#consumers].find((c) => c.queue.length >= MAX_AHEAD);
            if (!full) return r();
            full.wake = r;
          });
        }
        this.#iterator ??= this.#inner.blocks({ blockFrames: this.#blockFrames })[Symbol.asyncIterator]();
        const r = await this.#iterator.next();
        if (r.done) {
          this.#finished = true;
        } else {
          this.#produced++;
          const block = r.value;
          const writers = [...this.#consumers].filter((c) => !c.readOnly);
          const shared = writers.length < this.#consumers.size;
          writers.forEach((c, i) => c.queue.push(!shared && i === writers.length - 1 ? block : block.map((ch) => ch.slice())));
          if (shared) for (const c of this.#consumers) if (c.readOnly) c.queue.push(block);
        }
      } catch (e) {
        this.#error = e;
      } finally {
        this.#reading = null;
        this.#wakeAll();
      }
    })();
    return this.#reading;
  }
}
