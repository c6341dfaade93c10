/**
 * A reflection's gain read where the programme itself has stopped.
 *
 * With y = x + g·x(t − τ), wherever x is silent (after a note, hit or word ends into silence) the
 * input for the next τ is g·x(t − τ) alone, and cancelling with the right gain leaves nothing
 * there, whatever the programme was: the programme's own likeness to itself at τ, which biases
 * every spectral or cepstral reading of g the same way, does not enter. With a gain g' the
 * cancelled signal e = Y/(1 + g'·z^τ) holds x + (g − g')·(an inverse-filtered copy of x τ earlier);
 * in a stretch where x = 0 it is that error term alone, and its energy falls to the interpolation
 * kernel's own limit at g' = g.
 *
 * So: cancel with the current estimate, cut the excerpt into short blocks, keep the blocks the
 * cancellation empties (blocks where the programme is much quieter than its copy from τ earlier:
 * for a steady programme, |1 + g·e^{−jωτ}| ≤ 1 + |g| keeps the cancelled level within 6 dB of the
 * input's, so emptying a block by 10 dB or more needs the programme to have fallen away), and
 * minimise Σ log(E_b(g') + ε·Y_b) over g' on them: the maximum-likelihood gain for a programme
 * whose level varies from block to block (each block weighted by the inverse of what is left in it),
 * so the blocks where the programme is truly silent decide. E_b(g') is followed to second order
 * from one pass: e(g' + Δ) ≈ e + Δ·w with w = ∂e/∂g' = −D(e)/(1 + g'·z^τ), D the delay by τ.
 * Then the same with only the blocks emptied by 30 dB. Where no stretch is emptied that deep (a
 * programme that never stops, hiss or room sound under the tails) the answer is null.
 *
 * Streaming: every pass reads the excerpt block by block; only per-block sums are kept.
 */
import { CancelledError } from '../errors.ts';
import type { AudioSource } from '../source.ts';
import { EchoAdder, EchoCanceller } from './canceller.ts';
import { singleEchoKernel } from './kernel.ts';
import { MixScratch, mixBlock } from './mix.ts';
import type { Excerpt } from './refine.ts';

export interface TailGainOptions {
  /** Channel (0-based), or −1 for the mean of all channels. */
  channel: number;
  excerpt: Excerpt;
  signal?: { readonly aborted: boolean };
}

export interface TailGain {
  /** The gain that empties the silent stretches best. */
  gain: number;
  /** Blocks that decided it (emptied by at least 30 dB). */
  blocks: number;
  /** Median over those blocks of the cancelled energy over the input's, at `gain` (dB). */
  depthDb: number;
  /** Block length in samples. */
  blockSamples: number;
}

/** Blocks below this much under the loudest block are not read (digital silence, rounding). */
const FLOOR_DB = 60;
/** First selection: blocks the cancellation empties by this much (dB). */
const FIRST_EMPTIED_DB = 10;
/** Second selection: blocks emptied by this much (dB). */
const DEEP_EMPTIED_DB = 30;
/** ε of the criterion: what is left is not read below this much under the block's input (dB). */
const EPSILON_DB = 70;
/** Fewest blocks a selection must hold. */
const MIN_BLOCKS = 3;
/** Largest gain the cancelling recursion is run with. */
const MAX_GAIN = 0.98;

interface BlockSums {
  /** Σy², Σe², Σe·w, Σw² per block. */
  yy: Float64Array;
  ee: Float64Array;
  ew: Float64Array;
  ww: Float64Array;
  count: number;
}

/** Block length: about τ/4 (a tail is τ long), between 32 samples and 5 ms. */
export function tailBlockSamples(delaySamples: number, sampleRateHz: number): number {
  return Math.max(32, Math.min(Math.round(0.005 * sampleRateHz), Math.round(delaySamples / 4)));
}

/** One pass: per-block sums of y², e², e·w and w² for the cancellation at (τ, g). */
export async function tailBlockSums(source: AudioSource, delaySamples: number, gain: number, blockSamples: number, options: TailGainOptions, into?: BlockSums): Promise<BlockSums> {
  const { start, end, warmup } = options.excerpt;
  const from = Math.max(0, start - warmup);
  const count = Math.floor((end - start) / blockSamples);
  const sums = into && into.yy.length === count ? into : { yy: new Float64Array(count), ee: new Float64Array(count), ew: new Float64Array(count), ww: new Float64Array(count), count };
  sums.yy.fill(0);
  sums.ee.fill(0);
  sums.ew.fill(0);
  sums.ww.fill(0);
  const g = Math.max(-MAX_GAIN, Math.min(MAX_GAIN, gain));
  const kernel = singleEchoKernel(delaySamples, g);
  const cancel = new EchoCanceller(kernel);
  const cancelW = new EchoCanceller(kernel);
  const delay = new EchoAdder(singleEchoKernel(delaySamples, 1));
  let e = new Float64Array(0), w = new Float64Array(0);
  const mix = new MixScratch();
  let at = from - start;
  for await (const block of source.blocks({ startFrame: from, endFrame: start + count * blockSamples, reusable: true })) {
    if (options.signal?.aborted) throw new CancelledError('echo analysis cancelled');
    const y = mixBlock(block, options.channel, mix);
    if (e.length < y.length) {
      e = new Float64Array(y.length);
      w = new Float64Array(y.length);
    }
    const ev = e.subarray(0, y.length), wv = w.subarray(0, y.length);
    cancel.process(y, ev);
    // w = −(D e)/(1 + g·z^τ): the adder gives e + D e.
    delay.process(ev, wv);
    for (let i = 0; i < y.length; i++) wv[i] = wv[i]! - ev[i]!;
    cancelW.process(wv, wv);
    for (let i = 0; i < y.length; i++, at++) {
      if (at < 0) continue;
      const b = Math.floor(at / blockSamples);
      if (b >= count) break;
      const yi = y[i]!, ei = ev[i]!, wi = -wv[i]!;
      sums.yy[b] = sums.yy[b]! + yi * yi;
      sums.ee[b] = sums.ee[b]! + ei * ei;
      sums.ew[b] = sums.ew[b]! + ei * wi;
      sums.ww[b] = sums.ww[b]! + wi * wi;
    }
  }
  return sums;
}

/**
 * Consecutive blocks a selected run must hold: a tail lasts τ, about τ/L blocks; half of that, at
 * least 2 and at most 4. A steady note's block can also come out nearly empty by chance, where
 * its cancelled signal and w happen to be in phase, at a gain of its own; such blocks come one at
 * a time (on the corpus, a xylophone's notes 0.6 s apart read 303 ms / −0.10 as −0.127 from three
 * such blocks, an oboe's −0.30 as −0.313 from eleven).
 */
export function tailRunBlocks(delaySamples: number, blockSamples: number): number {
  return Math.max(2, Math.min(4, Math.floor(delaySamples / blockSamples / 2)));
}

/**
 * Blocks at least FLOOR_DB under the loudest in input energy whose cancelled energy is under
 * `ratio` of their input's, in runs of at least `run` consecutive blocks.
 */
function selectBlocks(s: BlockSums, ratio: number, run: number): Int32Array {
  let top = 0;
  for (let b = 0; b < s.count; b++) top = Math.max(top, s.yy[b]!);
  const floor = top * Math.pow(10, -FLOOR_DB / 10);
  const out: number[] = [];
  for (let b = 0; b < s.count; ) {
    let e = b;
    while (e < s.count && s.yy[e]! > floor && s.ee[e]! < ratio * s.yy[e]!) e++;
    if (e - b >= run) for (let k = b; k < e; k++) out.push(k);
    b = e > b ? e : b + 1;
  }
  return Int32Array.from(out);
}

/**
 * The step Δ minimising Σ_sel log(E_b + 2Δ·EW_b + Δ²·WW_b + ε·Y_b) for |Δ| ≤ span: a grid of 401
 * points, then a parabola through the best one and its neighbours.
 */
export function bestStep(s: BlockSums, sel: Int32Array, span: number): number {
  const eps = Math.pow(10, -EPSILON_DB / 10);
  const f = (d: number) => {
    let v = 0;
    for (let i = 0; i < sel.length; i++) {
      const b = sel[i]!;
      v += Math.log(Math.max(0, s.ee[b]! + 2 * d * s.ew[b]! + d * d * s.ww[b]!) + eps * s.yy[b]!);
    }
    return v;
  };
  const points = 401, h = (2 * span) / (points - 1);
  let best = 0, bestV = Infinity;
  for (let i = 0; i < points; i++) {
    const d = -span + i * h, v = f(d);
    if (v < bestV) {
      bestV = v;
      best = i;
    }
  }
  const d0 = -span + best * h;
  if (best === 0 || best === points - 1) return d0;
  const a = f(d0 - h), c = f(d0 + h), den = a - 2 * bestV + c;
  return den > 0 ? d0 + (0.5 * (a - c) / den) * h : d0;
}

/**
 * The gain that empties the stretches where the programme has stopped, starting from `estimate`
 * (its delay is kept), or null when the excerpt holds too few such stretches.
 */
export async function tailGain(source: AudioSource, estimate: { delaySamples: number; gain: number }, options: TailGainOptions): Promise<TailGain | null> {
  const tau = estimate.delaySamples;
  if (!(tau >= 1)) return null;
  const blockSamples = tailBlockSamples(tau, source.sampleRateHz);
  const run = tailRunBlocks(tau, blockSamples);
  let g = estimate.gain;
  let sums: BlockSums | undefined;
  const stages: { ratioDb: number; span: number; passes: number }[] = [
    { ratioDb: FIRST_EMPTIED_DB, span: 0.1, passes: 3 },
    { ratioDb: DEEP_EMPTIED_DB, span: 0.02, passes: 4 },
  ];
  let sel: Int32Array = new Int32Array(0);
  for (const stage of stages) {
    const ratio = Math.pow(10, -stage.ratioDb / 10);
    for (let pass = 0; pass < stage.passes; pass++) {
      sums = await tailBlockSums(source, tau, g, blockSamples, options, sums);
      sel = selectBlocks(sums, ratio, run);
      if (sel.length < MIN_BLOCKS) return null;
      const step = bestStep(sums, sel, stage.span);
      g = Math.max(-MAX_GAIN, Math.min(MAX_GAIN, g + step));
      if (Math.abs(step) < 1e-4) break;
    }
  }
  // What is left in the deep blocks at the final gain.
  sums = await tailBlockSums(source, tau, g, blockSamples, options, sums);
  sel = selectBlocks(sums, Math.pow(10, -DEEP_EMPTIED_DB / 10), run);
  if (sel.length < MIN_BLOCKS) return null;
  const ratios = Array.from(sel, (b) => sums!.ee[b]! / sums!.yy[b]!).sort((p, q) => p - q);
  const depthDb = 10 * Math.log10(Math.max(1e-30, ratios[Math.floor(ratios.length / 2)]!));
  return { gain: g, blocks: sel.length, depthDb, blockSamples };
}

/**
 * Whether a tail reading replaces the spectral one: the same sign and within 0.05 + 0.1·|g| of it
 * (the spectral readings it corrects are off by up to 0.08; one further off is a different thing
 * emptied, not the same reflection read better).
 */
export function tailGainAgrees(tail: TailGain, gain: number): boolean {
  return tail.blocks >= MIN_BLOCKS && Math.sign(tail.gain) === Math.sign(gain) && Math.abs(tail.gain - gain) <= 0.05 + 0.1 * Math.abs(gain);
}
