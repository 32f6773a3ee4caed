import { extname } from 'node:path';
import { oneOf, ShoalError } from '../core/index.js';
import {
  arrowBufferFrames,
  arrowFrames,
  csvFrames,
  csvLayout,
  type Decoded,
  type FrameDecoder,
  type FrameFormat,
  type FrameWriter,
  ndjsonFrames,
  ndjsonLayout,
  type ReadOptions,
  type WriterOptions,
} from '../frames/index.js';
import { type ArrowScan, scanArrow } from './arrow-scan.js';
import { createArrowWriter } from './arrow-write.js';
import { fileLines, openInput } from './input-file.js';
import { createTextWriter } from './text-writer.js';

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

/** Whether a file is gzip-compressed, by its extension (`legs.csv.gz`). */
export function isGzip(path: string): boolean {
  return extname(path).toLowerCase() === '.gz';
}

/**
 * The format of a file: the one given, else the one its extension names (for `x.csv.gz`, the one
 * before `.gz`: text formats are read through gunzip).
 */
export function formatOf(path: string, format?: FrameFormat): FrameFormat {
  if (format !== undefined) return oneOf('format', 'format', format, FORMATS);
  const inner = isGzip(path) ? path.slice(0, -3) : path;
  const found = EXTENSIONS[extname(inner).toLowerCase()];
  if (found === undefined) {
    const ext = extname(inner);
    throw new ShoalError(
      'invalid-parameter',
      `${path}: cannot tell the format from ${ext === '' ? 'a name without an extension' : `the extension ${ext}`}; give --format ${FORMATS.join('|')} (known extensions: ${Object.keys(EXTENSIONS).join(', ')}, each optionally followed by .gz)`,
    );
  }
  return found;
}

/**
 * Frames from a recorded file of any format Shoal reads (Arrow IPC file or stream, CSV, NDJSON; CSV
 * and NDJSON also gzip-compressed, read through gunzip as they stream).
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
  const gzip = isGzip(path);
  if (format === 'arrow' && gzip) {
    throw new ShoalError(
      'invalid-input',
      `${path}: a compressed Arrow IPC file cannot be read in batches; decompress it first (gunzip -k ${path})`,
    );
  }
  if (format === 'arrow') return readArrow(path, decoder, options);
  if (format === 'csv') return csvFrames(fileLines(path, gzip), path, decoder, options);
  return ndjsonFrames(fileLines(path, gzip), path, decoder, options);
}

/**
 * Frames from an Arrow IPC file or stream on disk, one per record batch.
 *
 * @example
 * for await (const { frame } of readArrow('legs.arrow', new FrameDecoder({ id: 'leg_id' }))) total += frame.rows;
 */
export async function* readArrow(
  path: string,
  decoder: FrameDecoder,
  options: ReadOptions = {},
): AsyncGenerator<Decoded> {
  const handle = await openInput(path);
  try {
    const { size } = await handle.stat();
    const head = Buffer.alloc(6);
    const tail = Buffer.alloc(6);
    await handle.read(head, 0, 6, 0);
    await handle.read(tail, 0, 6, Math.max(0, size - 6));
    const cutFile = head.toString('latin1') === 'ARROW1' && tail.toString('latin1') !== 'ARROW1';
    let batches = 0;
    try {
      if (cutFile) {
        // A file cut short has no footer to find its batches by: read what precedes the cut as a stream.
        const scan = await scanArrow(handle, size);
        if (options.rejects !== 'keep' || scan.completeBatches === 0 || !scan.schemaFirst)
          throw cutShort(path, scan);
        const bytes = Buffer.alloc(scan.completeEnd - 8);
        await handle.read(bytes, 0, bytes.length, 8);
        yield* arrowBufferFrames(bytes, decoder, path, options);
        yield cutRejection(decoder, path, scan);
        return;
      }
      for await (const decoded of arrowFrames(handle, path, decoder, options)) {
        batches++;
        yield decoded;
      }
    } catch (e) {
      if (!(e instanceof ShoalError) || e.code !== 'invalid-input' || !e.message.includes('Arrow IPC'))
        throw e;
      // The reader may have closed the file on its way out; then there is nothing more to say.
      const scan = await scanArrow(handle, size).catch(() => null);
      if (scan === null || scan.problem === null || scan.problemAt === (scan.fileFormat ? 8 : 0)) throw e;
      if (options.rejects !== 'keep' || batches === 0) throw cutShort(path, scan, e);
      yield cutRejection(decoder, path, scan);
    }
  } finally {
    await handle.close();
  }
}

/** The error for an Arrow IPC file that is cut short or damaged, with where and what was read. */
function cutShort(path: string, scan: ArrowScan, cause?: unknown): ShoalError {
  const what = scan.fileFormat ? 'Arrow IPC file' : 'Arrow IPC stream';
  return new ShoalError(
    'invalid-input',
    `${path}: the ${what} is cut short or damaged at byte ${scan.problemAt} (${scan.problem}); ${scan.completeBatches} complete record batches precede it${scan.completeBatches === 0 ? '' : scan.schemaFirst ? ' (give --rejects to use them)' : ', but the schema was in the lost footer, so they cannot be read'}`,
    { cause },
  );
}

/** The cut as one rejection after the complete batches (an empty frame carries it). */
function cutRejection(decoder: FrameDecoder, path: string, scan: ArrowScan): Decoded {
  const binding = decoder.binding!;
  const what = scan.fileFormat ? 'Arrow IPC file' : 'Arrow IPC stream';
  return {
    frame: decoder.frame(0, binding, binding.id >= 0 ? [] : null, path, 'row', scan.completeBatches),
    rejected: [
      {
        index: scan.completeBatches,
        reason: `${path}: the ${what} is cut short or damaged at byte ${scan.problemAt} (${scan.problem}); the ${scan.completeBatches} complete record batches before it were read, the rest is lost`,
      },
    ],
  };
}

/** A writer for a file of the given format (by default the one its extension names). */
export function createWriter(
  path: string,
  options: WriterOptions,
  format?: FrameFormat,
): Promise<FrameWriter> {
  const chosen = formatOf(path, format);
  if (chosen === 'arrow') return createArrowWriter(path, options);
  if (chosen === 'csv') return createTextWriter(path, options, csvLayout());
  return createTextWriter(path, options, ndjsonLayout());
}
