/** What part of the recording is on screen, the selection and the play position, in seconds. */
export interface Range {
  readonly start: number;
  readonly end: number;
}

export class Timeline {
  duration = $state(0);
  /** Left edge of the zoomable views. */
  start = $state(0);
  /** Seconds across the zoomable views. */
  span = $state(1);
  selection = $state.raw<Range | null>(null);
  playhead = $state(0);

  reset(duration: number): void {
    this.duration = duration;
    this.start = 0;
    this.span = Math.max(duration, 1e-3);
    this.selection = null;
    this.playhead = 0;
  }

  get end(): number {
    return this.start + this.span;
  }

  /** The selection, or the whole recording. */
  get region(): Range {
    return this.selection ?? { start: 0, end: this.duration };
  }

  #clamp(): void {
    const minSpan = 0.002;
    this.span = Math.min(Math.max(this.span, minSpan), Math.max(this.duration, minSpan));
    this.start = Math.min(Math.max(0, this.start), Math.max(0, this.duration - this.span));
  }

  /** factor < 1 zooms in, keeping `around` (seconds) in place. */
  zoom(factor: number, around = this.start + this.span / 2): void {
    const frac = (around - this.start) / this.span;
    this.span *= factor;
    this.#clamp();
    this.start = around - frac * this.span;
    this.#clamp();
  }

  scroll(seconds: number): void {
    this.start += seconds;
    this.#clamp();
  }

  show(range: Range): void {
    this.start = range.start;
    this.span = Math.max(range.end - range.start, 0.002);
    this.#clamp();
  }

  /** Centres the views on `t` without zooming. */
  centre(t: number): void {
    this.start = t - this.span / 2;
    this.#clamp();
  }

  /**
   * Moves to another time line of `duration` seconds (the corrected preview's, or back): the view,
   * the selection and the play position follow `map`, so they stay on the same programme.
   */
  rebase(duration: number, map: (t: number) => number): void {
    const a = map(this.start), b = map(this.start + this.span);
    const sel = this.selection;
    const s = sel ? [map(sel.start), map(sel.end)] : null;
    const head = map(this.playhead);
    this.duration = duration;
    this.start = Math.min(a, b);
    this.span = Math.max(Math.abs(b - a), 1e-3);
    this.#clamp();
    this.selection = s ? { start: Math.max(0, Math.min(s[0]!, s[1]!)), end: Math.min(duration, Math.max(s[0]!, s[1]!)) } : null;
    this.playhead = Math.max(0, Math.min(duration, head));
  }

  select(a: number, b: number): void {
    const start = Math.max(0, Math.min(a, b)), end = Math.min(this.duration, Math.max(a, b));
    this.selection = end - start > 0.005 ? { start, end } : null;
  }
}
