/**
 * Listening: what is played (original or corrected), whether it loops, the listening level, the
 * meters and the ear guards (a caution before the first playback and before loud passages). The
 * Web Audio engine that plays (state/playback.ts: chunks a few seconds ahead, fade-in, meters) is
 * not in the page's entry script: it is loaded when the page is idle, or by the first Play.
 */
import type { Engine } from '../lib/engine.ts';
import type { Which } from '../worker/protocol.ts';
import type { Timeline } from './timeline.svelte.ts';
import type { Playback } from './playback.ts';

export const FADE_IN_SECONDS = 0.5;

export interface PlayerHost {
  readonly view: Engine | null;
  readonly timeline: Timeline;
  readonly sampleRateHz: number;
  /** dB to add to the corrected signal so it sounds as loud as the original (0 when off). */
  readonly correctedMatchDb: number;
  readonly hasCorrected: boolean;
  /** Called before switching versions: the host moves the time line so the position stays on the same programme. */
  beforeSwitch?(to: Which): void;
}

export class Player {
  playing = $state(false);
  which = $state<Which>('original');
  loop = $state(false);
  /** Listening level in dB applied to everything played. */
  levelDb = $state(-12);
  meterDb = $state(-120);
  meterPeakDb = $state(-120);
  /**
   * Per channel, of the programme as played (before the listening level): sample peak (dBFS, held)
   * and the loudness of the last ~0.4 s, K-weighted as BS.1770 (LUFS; Web Audio's shelving filter
   * approximates the standard's first stage).
   */
  channelMeters = $state.raw<readonly { peakDb: number; heldDb: number; lufs: number }[]>([]);
  caution = $state<null | { reason: 'first' | 'loud'; detail: string }>(null);
  #accepted = false;
  /** The listening level at which a loud passage was accepted: at or below it, no new caution. */
  loudAcceptedAtDb: number | null = null;
  #engine: Playback | null = null;
  #loading: Promise<Playback> | null = null;
  /** Counts starts and stops: a start that finishes loading after a stop does not play. */
  #gen = 0;

  constructor(readonly host: PlayerHost) {}

  /** Loads the playback engine ahead of the first Play. */
  warm = (): Promise<Playback> => (this.#loading ??= import('./playback.ts').then(
    (m) => (this.#engine = new m.Playback(this)),
    (e: unknown) => { this.#loading = null; throw e; },
  ));

  toggle = () => (this.playing ? this.stop() : this.play());

  play = () => {
    if (!this.host.view) return;
    if (!this.#accepted) {
      this.caution = { reason: 'first', detail: '' };
      return;
    }
    this.#begin(this.host.timeline.playhead);
  };

  #begin(from: number, fade = FADE_IN_SECONDS): void {
    const gen = ++this.#gen;
    this.warm()
      .then((engine) => (gen === this.#gen ? engine.start(from, fade) : undefined))
      .catch((e: unknown) => {
        this.stop();
        console.warn('playback stopped:', e);
      });
  }

  acceptCaution = () => {
    const c = this.caution;
    this.caution = null;
    this.#accepted = true;
    if (c?.reason === 'loud') this.loudAcceptedAtDb = this.levelDb;
    this.#begin(this.host.timeline.playhead);
  };

  declineCaution = () => {
    this.caution = null;
  };

  stop = () => {
    this.#gen++;
    this.#engine?.stop();
    this.playing = false;
    this.meterDb = -120;
    this.channelMeters = this.channelMeters.map(() => ({ peakDb: -120, heldDb: -120, lufs: -120 }));
  };

  /** A/B: the other version from the same position. */
  switchTo = (which: Which) => {
    if (which === 'processed' && !this.host.hasCorrected) return;
    if (this.which === which) return;
    this.host.beforeSwitch?.(which);
    this.which = which;
    if (this.playing) this.#begin(this.host.timeline.playhead, 0.01);
  };

  swap = () => this.switchTo(this.which === 'original' ? 'processed' : 'original');

  setLevel = (db: number) => {
    this.levelDb = Math.max(-40, Math.min(0, db));
    this.#engine?.setLevel(this.levelDb);
  };

  /** The gain of what is played now (dB): the listening level, and the loudness match for the corrected version. */
  gainDb(): number {
    return this.levelDb + (this.which === 'processed' ? this.host.correctedMatchDb : 0);
  }
}
