import type { FileHandle } from 'node:fs/promises';
import { open } from 'node:fs/promises';
import { Footer } from 'apache-arrow/ipc/metadata/file';
import { type ChangePoints, ShoalError } from '../core/index.js';
import { declaredChanges, type FrameFormat } from '../frames/index.js';
import { formatOf } from './formats.js';

/** The Arrow IPC file format ends with the footer's length (int32) and the magic `ARROW1`. */
const MAGIC = 'ARROW1';
const TAIL = 4 + MAGIC.length;

/**
 * The footer of an Arrow IPC file (Apache Arrow, "IPC File Format": the schema and the blocks of its
 * record batches), read from the file's end; null when the file does not end like one (an Arrow IPC
 * stream, or not Arrow at all).
 */
export async function readFooter(file: FileHandle): Promise<Footer | null> {
  const { size } = await file.stat();
  if (size < TAIL + MAGIC.length) return null;
  const tail = Buffer.alloc(TAIL);
  await file.read(tail, 0, TAIL, size - TAIL);
  if (tail.toString('latin1', 4) !== MAGIC) return null;
  const footerLength = tail.readInt32LE(0);
  if (footerLength <= 0 || footerLength > size - TAIL) return null;
  const footerBytes = Buffer.alloc(footerLength);
  await file.read(footerBytes, 0, footerLength, size - TAIL - footerLength);
  return Footer.decode(footerBytes);
}

/**
 * The true change points a recorded file carries: an Arrow IPC file written by `shoal spawn` records
 * them in its schema metadata. Null when the file records none (CSV, NDJSON, an Arrow stream, any
 * Arrow file from elsewhere); an entry that is not what the writer writes is refused, naming the file.
 *
 * @example
 * const changes = await recordedChanges('sea.arrow'); // { rows: [25000, 50000, 75000], … }
 */
export async function recordedChanges(path: string, format?: FrameFormat): Promise<ChangePoints | null> {
  if (formatOf(path, format) !== 'arrow') return null;
  const file = await open(path, 'r');
  try {
    const footer = await readFooter(file);
    if (footer === null) return null;
    const changes = declaredChanges(footer.schema.metadata);
    if (typeof changes === 'string') throw new ShoalError('invalid-input', `${path}: ${changes}`);
    return changes;
  } finally {
    await file.close();
  }
}
