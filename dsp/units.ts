/**
 * Unit aliases. They document signatures; the compiler does not check them, so names still
 * carry their units (`sampleRateHz`, `delaySeconds`, `gainDb`).
 */
/** Cycles per second. */
export type Hertz = number;
/** Time in seconds. */
export type Seconds = number;
/** A count of sample frames (one sample per channel). */
export type Frames = number;
/** Level in decibels. */
export type Decibels = number;
/** Linear amplitude ratio. */
export type Gain = number;
/** Pitch interval in cents (1/100 of an equal-tempered semitone). */
export type Cents = number;

export const dbToGain = (gainDb: Decibels): Gain => Math.pow(10, gainDb / 20);
export const gainToDb = (gain: Gain): Decibels => 20 * Math.log10(Math.abs(gain));
export const powerToDb = (power: number): Decibels => 10 * Math.log10(power);
export const ratioToCents = (ratio: number): Cents => 1200 * Math.log2(ratio);
export const centsToRatio = (cents: Cents): number => Math.pow(2, cents / 1200);
export const framesToSeconds = (frames: Frames, sampleRateHz: Hertz): Seconds => frames / sampleRateHz;
export const secondsToFrames = (seconds: Seconds, sampleRateHz: Hertz): Frames => seconds * sampleRateHz;
