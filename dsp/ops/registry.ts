/**
 * The one list of operations. The command line, the editor and the batch report are built from
 * it: adding an operation is one module in dsp/ops/ and one line here.
 */
import type { AnalysisOp, CorrectionOp, Operation } from './types.ts';
import { info } from './info.ts';
import { spectrum } from './spectrum.ts';
import { levels } from './levels.ts';
import { speed } from './speed.ts';
import { flutter } from './flutter.ts';
import { azimuth } from './azimuth.ts';
import { varispeed } from './varispeed.ts';
import { align } from './align.ts';
import { stretch } from './stretch.ts';
import { transpose } from './transpose.ts';
import { reverse } from './reverse.ts';
import { reversed } from './reversed.ts';
import { echo } from './echo.ts';
import { unecho } from './unecho.ts';
import { convert } from './convert.ts';

export const operations: readonly Operation[] = [
  // Analyses (read only), in the order diagnose and the reports show them.
  info,
  spectrum,
  levels,
  speed,
  echo,
  flutter,
  azimuth,
  reversed,
  // Corrections (write a new file).
  varispeed,
  unecho,
  align,
  stretch,
  transpose,
  reverse,
  convert,
];

export function findOperation(name: string): Operation | undefined {
  return operations.find((op) => op.name === name);
}

export const analyses = (): AnalysisOp[] => operations.filter((op): op is AnalysisOp => op.kind === 'analysis');
export const corrections = (): CorrectionOp[] => operations.filter((op): op is CorrectionOp => op.kind === 'correction');
