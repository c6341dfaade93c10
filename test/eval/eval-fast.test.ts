/**
 * The quick slice of the real-material evaluation (`npm run eval -- --fast`), run by `npm test`:
 * clean clips rendered from recorded samples (Fluid R3 GM soundfont through fluidsynth, Hydrogen
 * drum kits, Festival diphone speech) and copies with faults applied exactly by numpy/scipy
 * (test/corpus/build_corpus.py). Source of every truth here: the corpus manifest, i.e. the recorded
 * sample as rendered (clean) and the impairment as numpy/scipy applied it.
 *
 * The full corpus and its tables are `npm run eval`; this slice guards the bars of the analyses
 * on a few files of each kind, so a change that brings back a false alarm fails `npm test`.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { evaluate, type EvalReport, type ScorerReport } from './run.ts';

let report: EvalReport;

beforeAll(async () => {
  report = await evaluate({ fast: true, quiet: true, jobs: 2, corrections: false });
}, 900_000);

const table = (name: string): ScorerReport => {
  const t = report.scorers.find((s) => s.name === name);
  if (!t) throw new Error(`no ${name} table in the evaluation`);
  return t;
};

describe('real material, quick slice', () => {
  it('reads every clip', () => {
    expect(report.errors).toEqual([]);
    expect(report.corpus.clips).toBeGreaterThan(20);
  });

  it('claims no head azimuth error on stereo programme, and measures a head delay', () => {
    // Bar (analyses issue): "head azimuth error" 0 for delays no head makes.
    const t = table('azimuth');
    expect(t.falseAlarmList).toEqual([]);
    expect(t.detection.present.n).toBeGreaterThan(0);
    expect(t.detection.present.k).toBe(t.detection.present.n);
  });

  it('finds runs of digital zeros inside programme and calls nothing else a dropout', () => {
    // Bar: exact-zero runs ≥ 5 ms inside programme all found, start ±1 ms; gaps between hits are not dropouts.
    const t = table('dropouts');
    expect(t.falseAlarmList).toEqual([]);
    expect(t.detection.inBar.n).toBeGreaterThan(0);
    expect(t.detection.withinBar.k).toBe(t.detection.inBar.n);
  });

  it('reads the same bandwidth in levels and spectrum, and a low-pass cut-off within 5 %', () => {
    // Bar: bandwidth agrees between levels and spectrum within 5 %.
    const t = table('bandwidth');
    expect(t.falseAlarmList).toEqual([]);
    expect(t.detection.present.n).toBeGreaterThan(0);
    expect(t.detection.present.k).toBe(t.detection.present.n);
  });

  it('claims no wrong speed and no drift on clean material', () => {
    // Bar (analyses issue): speed false alarms on clean real material ≤ 0.5 % of files, none
    // claiming more than 1 %; the quick slice holds few files, so none at all.
    expect(table('speed').falseAlarms.clean.n).toBeGreaterThan(0);
    expect(table('speed').falseAlarms.clean.k).toBe(0);
    expect(table('drift').falseAlarms.clean.k).toBe(0);
  });

  it('reads tuning that follows a uniform speed change within ±3 cents where it is confident', () => {
    // Bar: tuning follows a uniform speed change within ±3 cents (modulo a semitone) wherever it
    // reports a confident reading.
    const cents = table('tuning').errors.cents;
    if (cents) expect(cents.worst).toBeLessThanOrEqual(3);
  });

  it('reports clipping exactly where it was applied', () => {
    const t = table('clipping');
    expect(t.falseAlarmList).toEqual([]);
  });
});
