/** Named positions in the original recording: added, named, jumped to, saved in the session, written as BWF cue points. */
import type { Marker } from '../worker/protocol.ts';

export class MarkersState {
  list = $state.raw<readonly Marker[]>([]);
  #next = 1;

  /** In time order. */
  get sorted(): Marker[] {
    return [...this.list].sort((a, b) => a.seconds - b.seconds);
  }

  reset = (markers: readonly Marker[]) => {
    this.list = markers.map((m) => ({ ...m }));
    this.#next = 1 + markers.reduce((n, m) => Math.max(n, Number(m.id.slice(1)) || 0), 0);
  };

  add = (seconds: number, name?: string): Marker => {
    const id = `m${this.#next++}`;
    const m: Marker = { id, name: name ?? `Marker ${this.list.length + 1}`, seconds: Math.max(0, seconds) };
    this.list = [...this.list, m];
    return m;
  };

  rename = (id: string, name: string) => {
    this.list = this.list.map((m) => (m.id === id ? { ...m, name } : m));
  };

  remove = (id: string) => {
    this.list = this.list.filter((m) => m.id !== id);
  };

  /** The next marker after `seconds` (or before it, going back), in original time. */
  neighbour(seconds: number, direction: 1 | -1): Marker | null {
    const s = this.sorted;
    return direction > 0 ? (s.find((m) => m.seconds > seconds + 1e-3) ?? null) : ([...s].reverse().find((m) => m.seconds < seconds - 1e-3) ?? null);
  }
}
