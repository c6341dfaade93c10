/** The time-stretch ratios the phase vocoder takes (dsp/stretch/phase-vocoder.ts), in a module of their own so the operation's spec reads them without the algorithm. */
export const MIN_RATIO = 0.25;
export const MAX_RATIO = 4;
