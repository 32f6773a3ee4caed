import { integerAtLeast, oneOf, ShoalError } from '../core/index.js';
import type { Rejection } from './frame.js';

/** How a reader of recorded data treats rows it cannot decode, and how it cuts text into frames. */
export interface ReadOptions {
  /**
   * `throw` (the default): the first bad row stops the read with a `ShoalError` naming file and line.
   * `keep`: bad rows are reported in each batch's `rejected` list and reading goes on.
   */
  readonly rejects?: 'throw' | 'keep';
  /** Rows per frame for text sources (default 1000); Arrow sources keep their own record batches. */
  readonly batchRows?: number;
}

export const DEFAULT_BATCH_ROWS = 1000;

export interface ResolvedReadOptions {
  readonly rejects: 'throw' | 'keep';
  readonly batchRows: number;
}

export function resolveReadOptions(options: ReadOptions): ResolvedReadOptions {
  return {
    rejects: oneOf('read', 'rejects', options.rejects ?? 'throw', ['throw', 'keep'] as const),
    batchRows: integerAtLeast('read', 'batchRows', options.batchRows ?? DEFAULT_BATCH_ROWS),
  };
}

/** The error for a refused row when rejects are thrown. */
export function rejectionError(rejected: Rejection): ShoalError {
  return new ShoalError('invalid-input', rejected.reason);
}
