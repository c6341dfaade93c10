/** Spectrogram tiles as images, fetched from the view worker on demand and kept (LRU). */
import type { Engine } from './engine.ts';
import { SPECTRO_LUT } from './draw.ts';
import type { Which } from '../worker/protocol.ts';

const LIMIT = 600;
/** The colour map as one 32-bit RGBA word per level (byte order of ImageData on this machine). */
const LUT32 = new Uint32Array(SPECTRO_LUT.buffer.slice(0));

export class TileCache {
  #tiles = new Map<string, ImageBitmap | 'pending'>();
  constructor(private readonly engine: Engine, private readonly onReady: () => void) {}

  get(which: Which, level: number, index: number, version: number): ImageBitmap | null {
    const key = `${which}:${version}:${level}:${index}`;
    const v = this.#tiles.get(key);
    if (v === 'pending') return null;
    if (v) {
      this.#tiles.delete(key);
      this.#tiles.set(key, v);
      return v;
    }
    this.#tiles.set(key, 'pending');
    this.engine.run({ type: 'tile', which, level, index }).promise.then(async (t) => {
      const img = new ImageData(t.columns, t.rows);
      const px = new Uint32Array(img.data.buffer);
      for (let c = 0; c < t.columns; c++) {
        for (let r = 0; r < t.rows; r++) px[(t.rows - 1 - r) * t.columns + c] = LUT32[t.values[c * t.rows + r]!]!;
      }
      this.#tiles.set(key, await createImageBitmap(img));
      while (this.#tiles.size > LIMIT) {
        const first = this.#tiles.keys().next().value!;
        const old = this.#tiles.get(first);
        if (old && old !== 'pending') old.close();
        this.#tiles.delete(first);
      }
      this.onReady();
    }, () => this.#tiles.delete(key));
    return null;
  }

  /** Whether a tile is cached (no fetch). */
  peek(which: Which, level: number, index: number, version: number): ImageBitmap | null {
    const v = this.#tiles.get(`${which}:${version}:${level}:${index}`);
    return v && v !== 'pending' ? v : null;
  }
}
