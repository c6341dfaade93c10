/** Spectrogram tiles as images, fetched from the view worker on demand and kept (LRU). */
import type { Engine } from './engine.ts';
import { SPECTRO_LUT } from './draw.ts';
import type { Which } from '../worker/protocol.ts';

const LIMIT = 600;

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
      for (let c = 0; c < t.columns; c++) {
        for (let r = 0; r < t.rows; r++) {
          const v8 = t.values[c * t.rows + r]!;
          img.data.set(SPECTRO_LUT.subarray(v8 * 4, v8 * 4 + 4), ((t.rows - 1 - r) * t.columns + c) * 4);
        }
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
