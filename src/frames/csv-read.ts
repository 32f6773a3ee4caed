import { ShoalError } from '../core/index.js';
import { TypeTally } from './cells.js';
import type { SourceColumn } from './columns.js';
import { CsvParser } from './csv-parser.js';
import type { FrameDecoder } from './decoder.js';
import type { Decoded } from './frame.js';
import type { ReadOptions } from './read-options.js';
import { type LineChunk, type TextFormat, type TextRecord, textFrames } from './text-frames.js';

/**
 * Frames from CSV text with a header row (RFC 4180 quoting; an empty field is a missing value), given
 * as chunks of lines (`src/files/` reads them from disk). Column types are inferred from the first
 * batch by majority (see `TypeTally`): a column is a category only when most of its present cells are
 * not numbers. `path` names the source in messages.
 *
 * @example
 * const decoder = new FrameDecoder({ label: 'rejected' });
 * for await (const { frame } of csvFrames(fileLines('legs.csv'), 'legs.csv', decoder)) total += frame.rows;
 */
export async function* csvFrames(
  lines: AsyncGenerator<LineChunk>,
  path: string,
  decoder: FrameDecoder,
  options: ReadOptions = {},
): AsyncGenerator<Decoded> {
  const records = csvRecords(path, lines);
  try {
    const first = await records.next();
    if (first.done) return;
    const [header, ...rest] = first.value;
    const only = header!.value?.length === 1 ? header!.value[0]! : '';
    if (only.includes(';') || only.includes('\t')) {
      throw new ShoalError(
        'invalid-input',
        `${path} line ${header!.line}: the header is one column, ${JSON.stringify(only)}: the file is separated by ${only.includes(';') ? 'semicolons' : 'tabs'}, and Shoal reads comma-separated CSV (RFC 4180); convert it first`,
      );
    }
    if (header!.problem !== null) {
      throw new ShoalError(
        'invalid-input',
        `${path} line ${header!.line}: malformed header: ${header!.problem}`,
      );
    }
    yield* textFrames(withFirst(rest, records), csvFormat(header!.value!), decoder, path, options);
  } finally {
    await records.return(undefined);
  }
}

async function* withFirst<T>(
  first: readonly T[],
  rest: AsyncIterator<readonly T[]>,
): AsyncGenerator<readonly T[]> {
  if (first.length > 0) yield first;
  for (let next = await rest.next(); !next.done; next = await rest.next()) yield next.value;
}

/**
 * Records from chunks of lines, one non-empty array per chunk that completes a record: blank lines
 * between records are skipped; a quoted field may span lines (and chunks); a quote still open at the
 * end of the file is an error naming the line where its record began.
 */
async function* csvRecords(
  path: string,
  chunks: AsyncGenerator<LineChunk>,
): AsyncGenerator<TextRecord<string[]>[]> {
  const parser = new CsvParser();
  let start = 0;
  try {
    for await (const { lines, first } of chunks) {
      const records: TextRecord<string[]>[] = [];
      for (let k = 0; k < lines.length; k++) {
        const text = lines[k]!;
        if (!parser.open) {
          if (text.length === 0) continue;
          start = first + k;
        }
        const result = parser.line(text);
        if (result === null) continue;
        records.push(
          typeof result === 'string'
            ? { line: start, value: null, problem: `malformed CSV: ${result}` }
            : { line: start, value: result, problem: null },
        );
      }
      if (records.length > 0) yield records;
    }
  } finally {
    await chunks.return(undefined);
  }
  if (parser.open) {
    throw new ShoalError(
      'invalid-input',
      `${path} line ${start}: unterminated quoted field (the file ends inside it)`,
    );
  }
}

function csvFormat(header: readonly string[]): TextFormat<string[]> {
  return {
    columns(first, cells): SourceColumn[] {
      return header.map((name, i) => {
        const tally = new TypeTally();
        for (const record of first) {
          if (record.length === header.length) tally.add(cells.textType(record[i]!), record[i]);
        }
        return { name, type: tally.decide(), codeLike: tally.codeLike(), detail: 'CSV text' };
      });
    },
    cells(record) {
      return record.length === header.length
        ? record
        : `malformed CSV: expected ${header.length} fields (as in the header), got ${record.length}`;
    },
  };
}
