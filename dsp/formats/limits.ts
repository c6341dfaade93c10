/**
 * What Reelwright opens, by design: the sample rates and channel counts a header may state. A value
 * outside these is refused when the file is opened (one line naming the file, the value and the
 * byte offset), so no analysis ever prints a duration of 8.2e+300 hours and no output becomes a
 * 1 Hz WAV. The limits also bound memory: the analyses keep per-channel state and buffers whose
 * length is a fixed time, so channels × rate decides how much `diagnose` needs.
 *
 * Sample rates: 1 kHz to 384 kHz. The lowest rate in use for speech is 2 kHz–8 kHz; the highest in
 * practice is DXD (352.8 kHz and 384 kHz). The ceiling is what the analyses are built and tested
 * for with bounded memory (test/io/limits.test.ts: `diagnose` and `check` of a 384 kHz stereo
 * file): the echo refinement's excerpt is capped in frames (dsp/echo/detect.ts MAX_REFINE_FRAMES),
 * but the echo search's longest frame still grows with the rate (4 × 500 ms: 2^20 points at
 * 384 kHz, 2^22 at 1.536 MHz), so higher rates would need that search decimated first.
 * Channels: at most 64 (a 2-inch 24-track tape, a 32- or 64-channel multitrack transfer); split
 * wider files into groups of channels first.
 */

export const MIN_SAMPLE_RATE_HZ = 1000;
export const MAX_SAMPLE_RATE_HZ = 384_000;
export const MAX_CHANNELS = 64;

/** A rate for a message: integers exactly, absurd magnitudes in exponent form, others to 10 digits. */
function show(v: number): string {
  if (!Number.isFinite(v) || (Number.isInteger(v) && Math.abs(v) < 2 ** 53)) return String(v);
  if (v !== 0 && (Math.abs(v) >= 1e9 || Math.abs(v) < 1e-3)) return v.toExponential(3).replace(/\.?0+e/, 'e');
  return String(Number(v.toPrecision(10)));
}

/**
 * Why `rateHz` is not a sample rate Reelwright reads, as a phrase after "the X chunk says"; null
 * when it is one.
 */
export function sampleRateProblem(rateHz: number): string | null {
  if (Number.isFinite(rateHz) && rateHz >= MIN_SAMPLE_RATE_HZ && rateHz <= MAX_SAMPLE_RATE_HZ) return null;
  return `a sample rate of ${show(rateHz)} Hz (Reelwright reads ${MIN_SAMPLE_RATE_HZ} Hz to ${MAX_SAMPLE_RATE_HZ} Hz)`;
}

/** Why `channels` is more than Reelwright opens; null when it is not. */
export function channelCountProblem(channels: number): string | null {
  if (channels <= MAX_CHANNELS) return null;
  return `${channels} channels: Reelwright opens at most ${MAX_CHANNELS} channels per file (split it into groups of channels first)`;
}
