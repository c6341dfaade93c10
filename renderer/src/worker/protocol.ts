/** Messages between the page and the editor's workers. */
import type { ParamValues } from '../../../dsp/ops/types.ts';
import type { DiagnoseResult } from '../../../dsp/ops/diagnose.ts';
import type { PeakLevel, PeakPyramid } from '../lib/peaks.ts';
import type { AudioLayout } from '../../../dsp/formats/index.ts';

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
}

export interface SpectrumPair {
  readonly frequenciesHz: Float32Array;
  readonly beforeDb: Float32Array;
  readonly afterDb: Float32Array | null;
}

export interface Remeasure {
  readonly stepIndex: number;
  readonly op: string;
  readonly analysis: string;
  readonly rows: readonly { readonly name: string; readonly before: number | string | null; readonly after: number | string | null }[];
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
  | { type: 'diagnose' }
  | { type: 'preview'; steps: StepSpec[]; startFrame: number; endFrame: number }
  | { type: 'adoptProcessed'; channels: Float32Array[]; sampleRateHz: number; startFrame: number }
  | { type: 'dropProcessed' }
  | { type: 'chunk'; which: Which; startFrame: number; frames: number }
  | { type: 'tile'; which: Which; level: number; index: number }
  | { type: 'spectra'; startFrame: number; endFrame: number }
  | { type: 'remeasure'; steps: StepSpec[] }
  | { type: 'export'; steps: StepSpec[]; format: ExportFormat; target: string; description: string };

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
  export: { frames: number; bytes: number; container: 'RIFF' | 'RF64'; historyAdded: string };
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
