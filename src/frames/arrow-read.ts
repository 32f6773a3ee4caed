import { type Data, type RecordBatch, RecordBatchReader, type Schema } from 'apache-arrow';
import { ShoalError } from '../core/index.js';
import { ArrowBatchFiller, arrowColumns, declaredSchema } from './arrow-batch.js';
import { DirectStream } from './arrow-direct.js';
import type { Binding, BindProblem } from './columns.js';
import type { FrameDecoder } from './decoder.js';
import type { Decoded, MessageDecode, Rejection } from './frame.js';
import { type ReadOptions, rejectionError, resolveReadOptions } from './read-options.js';

/**
 * Frames from Arrow IPC data: the file format (random access, footer) and the stream format (a
 * sequence of encapsulated messages), both told apart by the file's leading magic bytes (Apache Arrow,
 * "IPC Streaming Format" and "IPC File Format"). One frame per record batch; a file of millions of rows
 * is read batch by batch, never whole. Bytes already in memory take the direct route when their columns
 * allow it (see arrow-direct.ts).
 */

/** One record batch as the filler reads it: column data in schema order and the row count. */
interface ColumnBatch {
  readonly columns: readonly Data[];
  readonly rows: number;
}

function columnsOf(batch: RecordBatch): ColumnBatch {
  return { columns: batch.data.children, rows: batch.numRows };
}

/** Binds schemas and fills record batches for one decoder. */
class ArrowSession {
  readonly decoder: FrameDecoder;
  private readonly filler: ArrowBatchFiller;
  private schema: Schema | null = null;
  private binding: Binding | null = null;

  constructor(decoder: FrameDecoder) {
    this.decoder = decoder;
    this.filler = new ArrowBatchFiller(decoder);
  }

  /** Bind the columns of `schema` (once per schema object). */
  bind(schema: Schema): Binding | BindProblem {
    if (schema === this.schema && this.binding !== null) return this.binding;
    const declared = declaredSchema(schema);
    if (typeof declared === 'string') return { code: 'invalid-input', reason: declared };
    const bound = this.decoder.bind(arrowColumns(schema), declared);
    if ('reason' in bound) return bound;
    this.schema = schema;
    this.binding = bound;
    return bound;
  }

  /**
   * Decode record batches into one frame, rows numbered from 0 across them. `batch` is the index of a
   * single batch in its file (positions are then rows within it), or −1 for a message.
   */
  decode(batches: readonly ColumnBatch[], binding: Binding, source: string, batch: number): Decoded {
    const decoder = this.decoder;
    const width = decoder.schema!.features.length;
    let total = 0;
    for (const b of batches) total += b.rows;
    decoder.buffer.reserve(total, width);
    const ids = binding.id >= 0 ? new Array<string>(total) : null;
    const rejected: Rejection[] = [];
    let at = 0;
    let refused = 0;
    for (const b of batches) {
      refused += this.filler.fill(b.columns, b.rows, binding, at, ids, { source, batch, rejected });
      at += b.rows;
    }
    const rows = refused > 0 ? decoder.buffer.compact(total, width, ids) : total;
    if (rejected.length > 1) rejected.sort((a, b) => a.index - b.index);
    return { frame: decoder.frame(rows, binding, ids, source, 'row', batch), rejected };
  }
}

function unreadable(source: string, e: unknown, batch: number): ShoalError {
  const where = batch > 0 ? ` (after ${batch} record batches)` : '';
  return new ShoalError(
    'invalid-input',
    `${source}: not a readable Arrow IPC file or stream${where}: ${(e as Error).message ?? String(e)}`,
    { cause: e },
  );
}

/** One decoded batch, or its rejections thrown under the default policy. */
function checked(decoded: Decoded, rejects: 'throw' | 'keep'): Decoded {
  if (rejects === 'throw' && decoded.rejected.length > 0) throw rejectionError(decoded.rejected[0]!);
  return decoded;
}

function bound(session: ArrowSession, schema: Schema, source: string): Binding {
  const binding = session.bind(schema);
  if ('reason' in binding) throw new ShoalError(binding.code, `${source}: ${binding.reason}`);
  return binding;
}

/**
 * What Arrow JS's reader reads from asynchronously: an opened file handle (random access, so the file
 * format is read batch by batch through its footer) or an async iterable of byte chunks.
 */
export type ArrowByteSource = Parameters<typeof RecordBatchReader.from>[0];

/**
 * Frames from an Arrow IPC file or stream read asynchronously, one per record batch (`src/files/`
 * opens the file and closes it). `path` names the source in messages.
 *
 * @example
 * const decoder = new FrameDecoder({ id: 'leg_id' });
 * for await (const { frame } of arrowFrames(handle, 'legs.arrow', decoder)) total += frame.rows;
 */
export async function* arrowFrames(
  input: ArrowByteSource,
  path: string,
  decoder: FrameDecoder,
  options: ReadOptions = {},
): AsyncGenerator<Decoded> {
  const { rejects } = resolveReadOptions(options);
  const session = new ArrowSession(decoder);
  let index = 0;
  let reader: Awaited<ReturnType<typeof RecordBatchReader.from>>;
  try {
    reader = await RecordBatchReader.from(input);
    await reader.open();
  } catch (e) {
    throw unreadable(path, e, 0);
  }
  for (;;) {
    let next: IteratorResult<RecordBatch>;
    try {
      next = await reader.next();
    } catch (e) {
      throw unreadable(path, e, index);
    }
    if (next.done) break;
    const binding = bound(session, reader.schema, path);
    yield checked(session.decode([columnsOf(next.value)], binding, path, index), rejects);
    index++;
  }
  if (index === 0 && reader.schema === undefined) throw unreadable(path, new Error('no schema'), 0);
}

/** Record batches from bytes in memory: the direct route when the stream allows it, else Arrow JS's reader. */
function memoryBatches(bytes: Uint8Array): { schema: Schema | null; next: () => ColumnBatch | null } {
  const direct = DirectStream.open(bytes);
  if (direct !== null) return { schema: direct.schema, next: () => direct.next() };
  const reader = RecordBatchReader.from(bytes);
  reader.open();
  return {
    schema: reader.schema ?? null,
    next: () => {
      const next = reader.next() as IteratorResult<RecordBatch>;
      return next.done ? null : columnsOf(next.value);
    },
  };
}

/**
 * Frames from Arrow IPC bytes already in memory (file or stream format), one per record batch.
 *
 * @example
 * for (const { frame } of arrowBufferFrames(bytes, decoder, 'replay buffer')) total += frame.rows;
 */
export function* arrowBufferFrames(
  bytes: Uint8Array,
  decoder: FrameDecoder,
  source = 'buffer',
  options: ReadOptions = {},
): Generator<Decoded> {
  const { rejects } = resolveReadOptions(options);
  const session = new ArrowSession(decoder);
  let batches: ReturnType<typeof memoryBatches>;
  try {
    batches = memoryBatches(bytes);
  } catch (e) {
    throw unreadable(source, e, 0);
  }
  if (batches.schema === null) throw unreadable(source, new Error('no schema'), 0);
  const binding = bound(session, batches.schema, source);
  for (let index = 0; ; index++) {
    let next: ColumnBatch | null;
    try {
      next = batches.next();
    } catch (e) {
      throw unreadable(source, e, index);
    }
    if (next === null) return;
    yield checked(session.decode([next], binding, source, index), rejects);
  }
}

/**
 * Decode one message (a Kafka record value holding an Arrow IPC stream, usually of one record batch)
 * into one frame. Nothing is thrown for bad data: a message that cannot be read at all is `ok: false`
 * with the reason; rows with bad values come back in `rejected`, the rest in the frame.
 *
 * @example
 * const result = decodeArrowMessage(decoder, message.value, `legs/${partition}@${offset}`);
 * if (!result.ok) deadLetter(message, result.reason);
 */
export function decodeArrowMessage(
  decoder: FrameDecoder,
  bytes: Uint8Array,
  source = 'message',
): MessageDecode {
  const batches: ColumnBatch[] = [];
  let schema: Schema | null;
  try {
    const reader = memoryBatches(bytes);
    schema = reader.schema;
    for (let next = reader.next(); next !== null; next = reader.next()) batches.push(next);
  } catch (e) {
    return { ok: false, reason: `${source}: not an Arrow IPC message: ${(e as Error).message ?? String(e)}` };
  }
  if (schema === null) return { ok: false, reason: `${source}: not an Arrow IPC message: no schema` };
  const session = new ArrowSession(decoder);
  const binding = session.bind(schema);
  if ('reason' in binding) return { ok: false, reason: `${source}: ${binding.reason}` };
  return { ok: true, ...session.decode(batches, binding, source, -1) };
}
