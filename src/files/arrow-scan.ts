import type { FileHandle } from 'node:fs/promises';
import { MessageHeader } from 'apache-arrow';
import { Message } from 'apache-arrow/ipc/metadata/message';

/**
 * Where an Arrow IPC file or stream on disk stops being readable, found by walking its message framing
 * without decoding any column: each encapsulated message is a continuation marker (0xFFFFFFFF), the
 * metadata length (int32), the flatbuffer metadata and a body of `bodyLength` bytes (Apache Arrow,
 * "Encapsulated message format"); a length of 0 ends the stream. The file format wraps the same
 * stream between the 8-byte magic `ARROW1\0\0` and a footer ending in `ARROW1`.
 */
export interface ArrowScan {
  /** Whether the bytes start with the file format's magic. */
  readonly fileFormat: boolean;
  /** Whether a file-format file ends with its magic (always true for the stream format). */
  readonly footer: boolean;
  /**
   * Whether the first message is the schema. Arrow JS's file writer keeps the schema in the footer
   * only, so a file of its cut short has nothing to read its batches by.
   */
  readonly schemaFirst: boolean;
  /** Record batches whose message lies wholly before the problem. */
  readonly completeBatches: number;
  /** Byte offset where the last complete message ends (where a clean read can stop). */
  readonly completeEnd: number;
  /** Byte offset of the problem, or null when the framing is sound to the end. */
  readonly problemAt: number | null;
  /** What is wrong there, in words. */
  readonly problem: string | null;
}

const FILE_MAGIC = 'ARROW1';
const FILE_START = 8;
const CONTINUATION = 0xffffffff;

async function bytesAt(handle: FileHandle, offset: number, length: number): Promise<Buffer> {
  const out = Buffer.alloc(length);
  const { bytesRead } = await handle.read(out, 0, length, offset);
  return out.subarray(0, bytesRead);
}

/** Walk the messages of an Arrow IPC file or stream of `size` bytes. */
export async function scanArrow(handle: FileHandle, size: number): Promise<ArrowScan> {
  const head = await bytesAt(handle, 0, FILE_START);
  const fileFormat = head.toString('latin1', 0, FILE_MAGIC.length) === FILE_MAGIC;
  const tail = fileFormat
    ? await bytesAt(handle, Math.max(0, size - FILE_MAGIC.length), FILE_MAGIC.length)
    : null;
  const footer = tail === null || tail.toString('latin1') === FILE_MAGIC;
  let at = fileFormat ? FILE_START : 0;
  let batches = 0;
  let schemaFirst = false;
  let first = true;
  const result = (problemAt: number | null, problem: string | null): ArrowScan => ({
    fileFormat,
    footer,
    schemaFirst,
    completeBatches: batches,
    completeEnd: at,
    problemAt,
    problem,
  });
  for (;;) {
    if (at === size)
      return result(fileFormat ? at : null, fileFormat ? 'the file ends before its footer' : null);
    const prefix = await bytesAt(handle, at, 8);
    if (prefix.length < 8) return result(at, 'the file ends inside a message header');
    let length = prefix.readInt32LE(0);
    let metaStart = at + 4;
    if (prefix.readUInt32LE(0) === CONTINUATION) {
      length = prefix.readInt32LE(4);
      metaStart = at + 8;
    }
    if (length === 0)
      return fileFormat && !footer ? result(at, 'the file ends before its footer') : result(null, null);
    if (length < 0 || metaStart + length > size) {
      return result(
        at,
        length < 0 ? `a message header gives a negative length` : 'the file ends inside a message',
      );
    }
    let message: Message;
    try {
      message = Message.decode(await bytesAt(handle, metaStart, length));
    } catch {
      return result(at, 'a message header cannot be decoded');
    }
    const end = metaStart + length + Number(message.bodyLength);
    if (end > size) return result(at, 'the file ends inside a record batch');
    at = end;
    if (first) schemaFirst = message.headerType === MessageHeader.Schema;
    first = false;
    if (message.headerType === MessageHeader.RecordBatch) batches++;
    if (fileFormat && footer && at >= size - FILE_MAGIC.length - 4) return result(null, null);
  }
}
