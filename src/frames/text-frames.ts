import { ShoalError } from '../core/index.js';
import type { CellReader } from './cells.js';
import type { SourceColumn } from './columns.js';
import type { FrameDecoder } from './decoder.js';
import type { Decoded, Rejection } from './frame.js';
import { type ReadOptions, rejectionError, resolveReadOptions } from './read-options.js';

/** One record of a text source: its parsed value, or what is wrong with its text. */
/** Consecutive lines of a text source: `lines[k]` is line `first + k` (1-based). */
export interface LineChunk {
  readonly lines: readonly string[];
  readonly first: number;
}

export interface TextRecord<T> {
  /** The 1-based line on which the record starts. */
  readonly line: number;
  readonly value: T | null;
  readonly problem: string | null;
}

/** What a text format (CSV, NDJSON) tells the shared batching about its records. */
export interface TextFormat<T> {
  /** The source's columns and the types their cells suggest, from the first batch of good records. */
  columns(first: readonly T[], cells: CellReader): SourceColumn[];
  /** The record's cells aligned with `names` (the bound columns), or why the record does not fit. */
  cells(value: T, names: readonly string[]): readonly unknown[] | string;
}

/**
 * Records of a text source (arriving in chunks) → frames of `batchRows` rows. The first batch is held
 * back to infer the schema (or to check the named columns), then every record is decoded straight into
 * the decoder's buffer; a bad record becomes a rejection, or a thrown `ShoalError` under the default
 * policy.
 */
export async function* textFrames<T>(
  chunks: AsyncIterable<readonly TextRecord<T>[]>,
  format: TextFormat<T>,
  decoder: FrameDecoder,
  source: string,
  options: ReadOptions,
): AsyncGenerator<Decoded> {
  const { rejects, batchRows } = resolveReadOptions(options);
  const iterator = chunks[Symbol.asyncIterator]();
  const first: TextRecord<T>[] = [];
  while (first.length < batchRows) {
    const next = await iterator.next();
    if (next.done) break;
    first.push(...next.value);
  }
  if (first.length === 0) return;
  const sample = first.slice(0, batchRows).flatMap((r) => (r.value === null ? [] : [r.value]));
  const bound = decoder.bind(format.columns(sample, decoder.cells));
  if ('reason' in bound) throw new ShoalError(bound.code, `${source}: ${bound.reason}`);
  const width = decoder.schema!.features.length;
  const buffer = decoder.buffer;
  let rows = 0;
  let ids: string[] | null = bound.id >= 0 ? [] : null;
  let rejected: Rejection[] = [];
  buffer.reserve(batchRows, width);

  const take = (record: TextRecord<T>): void => {
    let problem = record.problem;
    if (problem === null) {
      const cells = format.cells(record.value!, bound.names);
      problem = typeof cells === 'string' ? cells : decoder.fillCells(cells, bound, rows, ids);
    }
    if (problem === null) {
      buffer.positions[rows++] = record.line;
      return;
    }
    const rejection = { index: record.line, reason: `${source} line ${record.line}: ${problem}` };
    if (rejects === 'throw') throw rejectionError(rejection);
    rejected.push(rejection);
  };
  const emit = (): Decoded => {
    const decoded = { frame: decoder.frame(rows, bound, ids, source, 'line', -1), rejected };
    rows = 0;
    ids = bound.id >= 0 ? [] : null;
    rejected = [];
    return decoded;
  };

  let chunk: readonly TextRecord<T>[] = first;
  for (;;) {
    for (const record of chunk) {
      take(record);
      if (rows === batchRows) yield emit();
    }
    const next = await iterator.next();
    if (next.done) break;
    chunk = next.value;
  }
  if (rows > 0 || rejected.length > 0) yield emit();
}
