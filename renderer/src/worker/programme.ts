/**
 * The programme of a recording, apart from a line-up tone: a re-measurement judges a fix on the
 * material that had the fault (a reflection is in the voice, not in a tone recorded onto the tape
 * straight from an oscillator). A line-up tone is alone, steady for seconds and at a reference
 * level (common practice: REAL-MATERIAL.md), so a frame is tone-like when one spectral line holds
 * most of its power and it is well above the noise; a run of such frames of at least a second is a
 * tone. The programme is the longest stretch without one.
 */
import { FftPlan } from '../../../dsp/core/fft.ts';
import { makeWindow } from '../../../dsp/core/windows.ts';
import { CancelledError } from '../../../dsp/errors.ts';
import type { AudioSource } from '../../../dsp/source.ts';

const FRAME = 4096;
/** Share of a frame's power within ±3 bins of its strongest bin for it to be tone-like. */
const LINE_SHARE = 0.8;
/** Tone-like frames also need this level (dBFS RMS of the channel mix): a reference tone, not hum in a pause. */
const TONE_LEVEL_DBFS = -40;
const MIN_TONE_SECONDS = 1;
/** Kept clear around a tone: its ramps, and what a reflection or filter carries past its end. */
const GUARD_SECONDS = 0.2;

export interface ProgrammeSpan {
  readonly startFrame: number;
  readonly endFrame: number;
  /** Tones left out, in frames. */
  readonly tones: readonly (readonly [number, number])[];
}

export async function programmeSpan(source: AudioSource, signal?: { readonly aborted: boolean }): Promise<ProgrammeSpan> {
  const rate = source.sampleRateHz;
  const plan = new FftPlan(FRAME);
  const win = makeWindow('hann', FRAME);
  const frame = new Float64Array(FRAME), spec = new Float64Array(FRAME + 2);
  const power = new Float64Array(FRAME / 2 + 1);
  const flags: boolean[] = [];
  let fill = 0;
  const judge = () => {
    let energy = 0;
    for (let i = 0; i < FRAME; i++) energy += frame[i]! * frame[i]!;
    const rmsDb = 10 * Math.log10(energy / FRAME + 1e-30);
    for (let i = 0; i < FRAME; i++) frame[i] = frame[i]! * win[i]!;
    plan.realForward(frame, spec);
    let total = 0, peak = 0, at = 0;
    const bins = FRAME / 2 + 1;
    for (let b = 1; b < bins; b++) {
      power[b] = spec[2 * b]! ** 2 + spec[2 * b + 1]! ** 2;
      total += power[b]!;
      if (power[b]! > peak) { peak = power[b]!; at = b; }
    }
    let line = 0;
    for (let b = Math.max(1, at - 3); b <= Math.min(bins - 1, at + 3); b++) line += power[b]!;
    flags.push(rmsDb >= TONE_LEVEL_DBFS && total > 0 && line / total >= LINE_SHARE);
  };
  for await (const block of source.blocks()) {
    if (signal?.aborted) throw new CancelledError('cancelled');
    const n = block[0]!.length, nCh = block.length;
    for (let i = 0; i < n; i++) {
      let v = 0;
      for (let c = 0; c < nCh; c++) v += block[c]![i]!;
      frame[fill++] = v / nCh;
      if (fill === FRAME) { judge(); fill = 0; }
    }
  }
  const minRun = Math.ceil((MIN_TONE_SECONDS * rate) / FRAME), guard = Math.round(GUARD_SECONDS * rate);
  const tones: [number, number][] = [];
  for (let k = 0; k < flags.length;) {
    if (!flags[k]) { k++; continue; }
    let e = k;
    while (e < flags.length && flags[e]) e++;
    if (e - k >= minRun) tones.push([Math.max(0, k * FRAME - guard), Math.min(source.frames, e * FRAME + guard)]);
    k = e;
  }
  let best: [number, number] = [0, source.frames];
  if (tones.length) {
    const gaps: [number, number][] = [];
    let from = 0;
    for (const [a, b] of tones) { if (a > from) gaps.push([from, a]); from = Math.max(from, b); }
    if (from < source.frames) gaps.push([from, source.frames]);
    best = gaps.reduce((m, g) => (g[1] - g[0] > m[1] - m[0] ? g : m), [0, 0] as [number, number]);
  }
  return { startFrame: best[0], endFrame: best[1], tones };
}
