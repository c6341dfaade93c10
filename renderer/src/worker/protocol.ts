/** Messages between the page and the editor's workers. */
import type { ParamValues } from '../../../dsp/ops/types.ts';
import type { DiagnoseResult } from '../../../dsp/ops/diagnose.ts';
import type { PeakLevel, PeakPyramid } from '../lib/peaks.ts';
import type { AudioLayout } from '../../../dsp/formats/index.ts';
import type { TimeSegment } from '../../../dsp/ops/types.ts';
import type { VerdictRow } from '../lib/verdict.ts';
import type { StepReport } from './pipeline.ts';

export type Which = 'original' | 'processed';

export interface StepSpec {
  readonly op: string;
  readonly params: ParamValues;
  /**
   * What its delays and positions refer to: 'original' (default; measured on the original
   * recording or read off its time line, carried across earlier steps that change time) or
   * 'input' (the step's own input, used as they are).
   */
  readonly basis?: 'original' | 'input';
  /** Leave out what the step measures itself, so it measures on its own input. */
  readonly measureHere?: boolean;
  /** Limit the step to this part of the original recording (seconds), crossfaded at its edges. */
  readonly rangeSeconds?: readonly [number, number] | null;
  /** The analysis whose finding suggested it (re-measuring judges against that fault). */
  readonly suggestedBy?: string;
}

export interface FileRef {
  readonly handle: string;
  readonly name: string;
  readonly sizeBytes: number;
  /**
   * Web mode only: the picked file itself, so the worker reads its slices directly instead of
   * asking the page for each one (the page stays free for drawing). Absent in Electron.
   */
  readonly blob?: Blob;
}

export interface OpenResult {
  readonly layout: AudioLayout;
  readonly codingHistory: string;
  readonly chunkIds: readonly string[];
  /** The file's own cue points (BWF markers), as markers. */
  readonly markers: readonly Marker[];
}

/** A named position in the original recording. */
export interface Marker {
  readonly id: string;
  readonly name: string;
  /** Seconds from the start of the original recording. */
  readonly seconds: number;
}


export interface PreviewResult {
  readonly startFrame: number;
  readonly endFrame: number;
  readonly sampleRateHz: number;
  /** Planar output of the enabled steps over [startFrame, endFrame). */
  readonly channels: Float32Array[];
  readonly resolved: readonly ParamValues[];
  readonly warnings: readonly string[];
  /** RMS (dBFS, all channels) of the original region and of the result, for loudness matching. */
  readonly originalRmsDbfs: number;
  readonly processedRmsDbfs: number;
  /** Per step: what it ran with and what it carried from the original's time. */
  readonly reports: readonly StepReport[];
  /** Seconds of the original recording → seconds of the result (from the region's start, which is 0 s of the result). */
  readonly segments: readonly TimeSegment[];
  /** Every frequency of the original is × this in the result (1 when the chain keeps pitch; null when unknown). */
  readonly frequencyScale: number | null;
}

export interface SpectrumPair {
  readonly frequenciesHz: Float32Array;
  readonly beforeDb: Float32Array;
  readonly afterDb: Float32Array | null;
}

/** One step measured again on its own input and output, as verdicts (renderer/src/lib/verdict.ts). */
export interface Remeasure {
  readonly stepIndex: number;
  readonly op: string;
  readonly title: string;
  /** The analysis run before and after, or null when the step names none. */
  readonly analysis: string | null;
  readonly rows: readonly VerdictRow[];
  /** What was measured, in words ("the programme of its input, 3.72–24.70 s; the line-up tone left out"). */
  readonly material: string;
  readonly error: string | null;
}

export interface ExportFormat {
  readonly bitsPerSample: 16 | 24 | 32;
  readonly sampleFormat: 'int' | 'float';
  readonly dither: boolean;
  /** 'auto' writes RF64 only when the file would pass 4 GiB. */
  readonly container: 'auto' | 'rf64';
  /** bext with CodingHistory (BWF); false writes plain WAV with the history in a LIST chunk anyway. */
  readonly bwf: boolean;
}

export interface SpectroTile {
  readonly level: number;
  readonly index: number;
  readonly columns: number;
  readonly rows: number;
  /** columns × rows, column-major, 0–255 from FLOOR_DB to TOP_DB. */
  readonly values: Uint8Array;
}

export type Job =
  | { type: 'open'; file: FileRef }
  | { type: 'overview'; startFrame: number; endFrame: number }
  | { type: 'checksum' }
  | { type: 'diagnose'; params?: Readonly<Record<string, ParamValues>> }
  | { type: 'preview'; steps: StepSpec[]; startFrame: number; endFrame: number }
  | { type: 'adoptProcessed'; channels: Float32Array[]; sampleRateHz: number; startFrame: number }
  | { type: 'dropProcessed' }
  | { type: 'chunk'; which: Which; startFrame: number; frames: number }
  | { type: 'tile'; which: Which; level: number; index: number }
  | { type: 'spectra'; startFrame: number; endFrame: number; afterStartSeconds?: number; afterEndSeconds?: number }
  | { type: 'remeasure'; steps: StepSpec[] }
  | { type: 'export'; steps: StepSpec[]; format: ExportFormat; target: string; description: string; markers?: readonly Marker[] };

export interface JobResults {
  open: OpenResult;
  overview: PeakLevel;
  checksum: string;
  diagnose: DiagnoseResult;
  preview: PreviewResult;
  adoptProcessed: PeakPyramid;
  dropProcessed: null;
  chunk: Float32Array[];
  tile: SpectroTile;
  spectra: SpectrumPair;
  remeasure: Remeasure[];
  export: { frames: number; bytes: number; container: 'RIFF' | 'RF64'; historyAdded: string; cuePoints: number };
}

export type ToWorker =
  | { kind: 'job'; id: number; job: Job }
  | { kind: 'cancel'; id: number }
  | { kind: 'bytes'; rid: number; buf?: ArrayBuffer; error?: string }
  | { kind: 'wrote'; rid: number; error?: string };

export type FromWorker =
  | { kind: 'done'; id: number; result: unknown }
  | { kind: 'failed'; id: number; name: string; message: string }
  | { kind: 'progress'; id: number; fraction: number; label: string }
  | { kind: 'warn'; id: number; message: string }
  | { kind: 'read'; rid: number; handle: string; offset: number; length: number }
  | { kind: 'write'; rid: number; handle: string; bytes: ArrayBuffer; atOffset: number | null };

/** Spectrogram scale. */
export const FLOOR_DB = -115;
export const TOP_DB = -5;
export const SPECTRO_FFT = 2048;
export const SPECTRO_ROWS = 160;
export const SPECTRO_LOW_HZ = 20;
export const TILE_COLUMNS = 256;
