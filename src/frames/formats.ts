import { extname } from 'node:path';
import { oneOf, ShoalError } from '../core/index.js';
import { readArrow } from './arrow-read.js';
import { createArrowWriter } from './arrow-write.js';
import { readCsv } from './csv-read.js';
import { createCsvWriter } from './csv-write.js';
import type { FrameDecoder } from './decoder.js';
import type { Decoded } from './frame.js';
import { readNdjson } from './ndjson-read.js';
import { createNdjsonWriter } from './ndjson-write.js';
import type { ReadOptions } from './read-options.js';
import type { FrameFormat, FrameWriter, WriterOptions } from './writer.js';

const FORMATS = ['arrow', 'csv', 'ndjson'] as const;

const EXTENSIONS: Readonly<Record<string, FrameFormat>> = {
  '.arrow': 'arrow',
  '.arrows': 'arrow',
  '.ipc': 'arrow',
  '.feather': 'arrow',
  '.csv': 'csv',
  '.ndjson': 'ndjson',
  '.jsonl': 'ndjson',
};

/** The format of a file: the one given, else the one its extension names. */
export function formatOf(path: string, format?: FrameFormat): FrameFormat {
  if (format !== undefined) return oneOf('format', 'format', format, FORMATS);
  const found = EXTENSIONS[extname(path).toLowerCase()];
  if (found === undefined) {
    throw new ShoalError(
      'invalid-parameter',
      `${path}: cannot tell the format from the extension; name it (${FORMATS.join(', ')}) or use one of ${Object.keys(EXTENSIONS).join(', ')}`,
    );
  }
  return found;
}

/**
 * Frames from a recorded file of any format Shoal reads (Arrow IPC file or stream, CSV, NDJSON).
 *
 * @example
 * const decoder = new FrameDecoder({ label: 'rejected', id: 'leg_id' });
 * for await (const { frame, rejected } of readFrames('legs.arrow', decoder, { rejects: 'keep' })) { … }
 */
export function readFrames(
  path: string,
  decoder: FrameDecoder,
  options: ReadOptions & { readonly format?: FrameFormat } = {},
): AsyncGenerator<Decoded> {
  const format = formatOf(path, options.format);
  if (format === 'arrow') return readArrow(path, decoder, options);
  if (format === 'csv') return readCsv(path, decoder, options);
  return readNdjson(path, decoder, options);
}

/** A writer for a file of the given format (by default the one its extension names). */
export function createWriter(
  path: string,
  options: WriterOptions,
  format?: FrameFormat,
): Promise<FrameWriter> {
  const chosen = formatOf(path, format);
  if (chosen === 'arrow') return createArrowWriter(path, options);
  if (chosen === 'csv') return createCsvWriter(path, options);
  return createNdjsonWriter(path, options);
}
