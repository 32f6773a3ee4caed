import { TypeTally } from './cells.js';
import type { SourceColumn } from './columns.js';
import type { FrameDecoder } from './decoder.js';
import type { Decoded, MessageDecode } from './frame.js';
import type { ReadOptions } from './read-options.js';
import { type LineChunk, type TextFormat, type TextRecord, textFrames } from './text-frames.js';

/**
 * Frames from newline-delimited JSON given as chunks of lines (`src/files/` reads them from disk):
 * one JSON object per line, keys are columns. Column types are inferred from the JSON types of the
 * first batch, by majority (a JSON string is a category even when it looks like a number, but a few
 * quoted numbers do not make a numeric column a category). A key that a later record leaves out is a
 * missing value; keys first seen after the first
 * batch are ignored.
 *
 * @example
 * for await (const { frame } of ndjsonFrames(fileLines('legs.ndjson'), 'legs.ndjson', decoder)) total += frame.rows;
 */
export async function* ndjsonFrames(
  lines: AsyncIterable<LineChunk>,
  path: string,
  decoder: FrameDecoder,
  options: ReadOptions = {},
): AsyncGenerator<Decoded> {
  yield* textFrames(jsonLines(lines), jsonFormat(), decoder, path, options);
}

type JsonObject = Readonly<Record<string, unknown>>;

/** Parse one record; the reason as text when it is not a JSON object. */
function parseRecord(text: string): JsonObject | string {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (e) {
    return `not valid JSON (${(e as Error).message})`;
  }
  return asRecord(value);
}

function asRecord(value: unknown): JsonObject | string {
  if (typeof value !== 'object' || value === null || Array.isArray(value)) {
    return `expected a JSON object, got ${value === null ? 'null' : Array.isArray(value) ? 'an array' : typeof value}`;
  }
  return value as JsonObject;
}

async function* jsonLines(chunks: AsyncIterable<LineChunk>): AsyncGenerator<TextRecord<JsonObject>[]> {
  for await (const { lines, first } of chunks) {
    const records: TextRecord<JsonObject>[] = [];
    for (let k = 0; k < lines.length; k++) {
      const text = lines[k]!;
      if (text.trim().length === 0) continue;
      const value = parseRecord(text);
      const line = first + k;
      records.push(
        typeof value === 'string' ? { line, value: null, problem: value } : { line, value, problem: null },
      );
    }
    if (records.length > 0) yield records;
  }
}

function jsonFormat(): TextFormat<JsonObject> {
  const scratch: unknown[] = [];
  return {
    columns(first, cells): SourceColumn[] {
      const types = new Map<string, TypeTally>();
      for (const record of first) {
        for (const key of Object.keys(record)) {
          const tally = types.get(key) ?? new TypeTally();
          types.set(key, tally);
          tally.add(cells.jsonType(record[key]), record[key]);
        }
      }
      return [...types].map(([name, tally]) => {
        const type = tally.decide();
        return {
          name,
          type,
          codeLike: tally.codeLike(),
          detail: type === 'other' ? 'JSON object or array' : `JSON ${type}`,
        };
      });
    },
    cells(record, names) {
      scratch.length = names.length;
      for (let i = 0; i < names.length; i++) scratch[i] = record[names[i]!];
      return scratch;
    },
  };
}

const utf8 = new TextDecoder();

/**
 * Decode one JSON record (a Kafka message value, as text, bytes or an object already parsed) into a
 * one-row frame. The first record fixes the columns; in later records an absent key is a missing value.
 * A record that is not a JSON object is `ok: false`; a row with a bad value comes back in `rejected`.
 *
 * @example
 * const result = decodeJsonRecord(decoder, message.value, `legs/${partition}@${offset}`, Number(offset));
 * if (!result.ok) deadLetter(message, result.reason);
 */
export function decodeJsonRecord(
  decoder: FrameDecoder,
  record: string | Uint8Array | object,
  source = 'record',
  index = 0,
): MessageDecode {
  const value =
    typeof record === 'string'
      ? parseRecord(record)
      : record instanceof Uint8Array
        ? parseRecord(utf8.decode(record))
        : asRecord(record);
  if (typeof value === 'string') return { ok: false, reason: `${source} record ${index}: ${value}` };
  const format = jsonFormat();
  const binding = decoder.binding ?? decoder.bind(format.columns([value], decoder.cells));
  if ('reason' in binding) return { ok: false, reason: `${source}: ${binding.reason}` };
  decoder.buffer.reserve(1, decoder.schema!.features.length);
  const ids = binding.id >= 0 ? [] : null;
  const problem = decoder.fillCells(format.cells(value, binding.names) as unknown[], binding, 0, ids);
  decoder.buffer.positions[0] = index;
  const rows = problem === null ? 1 : 0;
  return {
    ok: true,
    frame: decoder.frame(rows, binding, ids, source, 'record', -1),
    rejected: problem === null ? [] : [{ index, reason: `${source} record ${index}: ${problem}` }],
  };
}
