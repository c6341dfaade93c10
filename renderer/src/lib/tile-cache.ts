/**
 * Spectrogram tiles as images, fetched from the view worker on demand and kept (LRU). The
 * worker's levels (0–255 over FLOOR_DB…TOP_DB) are kept beside each image, so a new colour range
 * repaints the tiles here without computing them again.
 */
import type { Engine } from './engine.ts';
import { FLOOR_DB, TOP_DB, type SpectroTile, type Which } from '../worker/protocol.ts';

const LIMIT = 600;
/** Spectrogram colour map: ink → deep teal → teal → amber → cream (256 RGBA entries). */
export const SPECTRO_LUT: Uint8ClampedArray = (() => {
  const stops: [number, number, number, number][] = [
    [0, 16, 19, 21], [0.3, 22, 64, 70], [0.55, 58, 160, 142], [0.78, 227, 164, 59], [1, 250, 240, 220],
  ];
  const lut = new Uint8ClampedArray(256 * 4);
  for (let i = 0; i < 256; i++) {
    const x = i / 255;
    let k = 0;
    while (k < stops.length - 2 && x > stops[k + 1]![0]) k++;
    const [x0, r0, g0, b0] = stops[k]!, [x1, r1, g1, b1] = stops[k + 1]!;
    const f = Math.min(1, Math.max(0, (x - x0) / (x1 - x0)));
    lut.set([r0 + f * (r1 - r0), g0 + f * (g1 - g0), b0 + f * (b1 - b0), 255], i * 4);
  }
  return lut;
})();

/** The colour map as one 32-bit RGBA word per level (byte order of ImageData on this machine). */
const LUT32 = new Uint32Array(SPECTRO_LUT.buffer.slice(0));

/** The dB range the colours span. */
export interface ColourRange { readonly floorDb: number; readonly topDb: number }

interface Entry { tile: SpectroTile; image: ImageBitmap | null; rangeKey: string; painting: boolean }

/** Level (0–255 of the worker's scale) → colour index for a range. */
function remap(range: ColourRange): Uint32Array {
  const out = new Uint32Array(256);
  for (let v = 0; v < 256; v++) {
    const db = FLOOR_DB + (v / 255) * (TOP_DB - FLOOR_DB);
    const k = Math.round(((db - range.floorDb) / (range.topDb - range.floorDb)) * 255);
    out[v] = LUT32[Math.max(0, Math.min(255, k))]!;
  }
  return out;
}

export class TileCache {
  #tiles = new Map<string, Entry | 'pending'>();
  #range: ColourRange = { floorDb: FLOOR_DB, topDb: TOP_DB };
  #lut = remap(this.#range);
  constructor(private readonly engine: Engine, private readonly onReady: () => void) {}

  /** Sets the colour range; tiles already here are repainted as they are asked for. */
  setRange(r: ColourRange): void {
    if (r.floorDb === this.#range.floorDb && r.topDb === this.#range.topDb) return;
    this.#range = r;
    this.#lut = remap(r);
  }

  get #rangeKey(): string { return `${this.#range.floorDb}:${this.#range.topDb}`; }

  #paint(key: string, e: Entry): void {
    if (e.painting) return;
    e.painting = true;
    const t = e.tile, lut = this.#lut, rangeKey = this.#rangeKey;
    const img = new ImageData(t.columns, t.rows);
    const px = new Uint32Array(img.data.buffer);
    for (let c = 0; c < t.columns; c++) {
      for (let r = 0; r < t.rows; r++) px[(t.rows - 1 - r) * t.columns + c] = lut[t.values[c * t.rows + r]!]!;
    }
    void createImageBitmap(img).then((bmp) => {
      e.image?.close();
      e.image = bmp;
      e.rangeKey = rangeKey;
      e.painting = false;
      if (this.#tiles.get(key) !== e) bmp.close();
      this.onReady();
    });
  }

  get(which: Which, level: number, index: number, version: number): ImageBitmap | null {
    const key = `${which}:${version}:${level}:${index}`;
    const v = this.#tiles.get(key);
    if (v === 'pending') return null;
    if (v) {
      this.#tiles.delete(key);
      this.#tiles.set(key, v);
      if (v.rangeKey !== this.#rangeKey) this.#paint(key, v);
      return v.image;
    }
    this.#tiles.set(key, 'pending');
    this.engine.run({ type: 'tile', which, level, index }).promise.then((tile) => {
      const e: Entry = { tile, image: null, rangeKey: '', painting: false };
      this.#tiles.set(key, e);
      this.#paint(key, e);
      while (this.#tiles.size > LIMIT) {
        const first = this.#tiles.keys().next().value!;
        const old = this.#tiles.get(first);
        if (old && old !== 'pending') old.image?.close();
        this.#tiles.delete(first);
      }
    }, () => this.#tiles.delete(key));
    return null;
  }

  /** Whether a tile is cached (no fetch). */
  peek(which: Which, level: number, index: number, version: number): ImageBitmap | null {
    const v = this.#tiles.get(`${which}:${version}:${level}:${index}`);
    return v && v !== 'pending' ? v.image : null;
  }
}
