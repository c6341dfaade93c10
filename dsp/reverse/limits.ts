/** The reversal detector's published limits (dsp/reverse/detect.ts): in a module of their own, so specs and the editor's words read them without the detector. */

/** |score| at or above this comes only with a determined direction (the editor's reading). */
export const REVERSED_SCORE_THRESHOLD = 0.3;
/** Below this much active sound the direction is not judged at all. */
export const REVERSED_MIN_ACTIVE_SECONDS = 0.3;
