import { Data, DataType, MessageHeader, MessageReader, Precision, type Schema } from 'apache-arrow';

/**
 * The direct route for Arrow IPC streams whose columns are all flat — integers, floats (not half),
 * booleans and utf8 strings, no dictionaries, no compression — which is the shape of an event stream of
 * numeric features. Each record batch message is parsed (Arrow JS's `MessageReader` and `Message`) and
 * its columns are made as typed-array views straight onto the message body, from the field nodes and
 * buffer regions the message lists, skipping Arrow JS's general vector loader and record-batch
 * assembly, which cost about as much again as the parse. Layout: Apache Arrow Columnar Format,
 * "Buffer listing for each layout" (fixed-size primitive: validity, data; variable-size binary:
 * validity, offsets, data) and "IPC Streaming Format" (a schema message, then record batches).
 *
 * Anything else (the file format, dictionaries, nested or other types) returns null from `open`, and
 * the caller uses Arrow JS's `RecordBatchReader`.
 */

/** The record batch message header: field nodes and buffer regions, in schema order. */
interface BatchHeader {
  readonly length: number;
  readonly nodes: readonly { readonly length: number; readonly nullCount: number }[];
  readonly buffers: readonly { readonly offset: number; readonly length: number }[];
  readonly compression: unknown;
}

type TypedArrayType = {
  readonly BYTES_PER_ELEMENT: number;
  new (buffer: ArrayBufferLike, byteOffset: number, length: number): ArrayLike<number>;
};

function isFixed(type: DataType): boolean {
  return (
    (DataType.isFloat(type) && type.precision !== Precision.HALF) ||
    DataType.isInt(type) ||
    DataType.isBool(type)
  );
}

/** The magic bytes that open an Arrow IPC file (the stream format has none). */
function isFileFormat(bytes: Uint8Array): boolean {
  return bytes.length >= 6 && String.fromCharCode(...bytes.subarray(0, 6)) === 'ARROW1';
}

export class DirectStream {
  readonly schema: Schema;
  private readonly reader: MessageReader;
  private readonly types: readonly DataType[];

  private constructor(reader: MessageReader, schema: Schema) {
    this.reader = reader;
    this.schema = schema;
    this.types = schema.fields.map((f) => f.type);
  }

  /** A direct reader for `bytes`, or null when they need Arrow JS's general reader. */
  static open(bytes: Uint8Array): DirectStream | null {
    if (isFileFormat(bytes)) return null;
    const reader = new MessageReader(bytes);
    const first = reader.readMessage();
    if (first === null || !first.isSchema()) return null;
    const schema = first.header();
    const flat = schema.fields.every((f) => isFixed(f.type) || DataType.isUtf8(f.type));
    return flat ? new DirectStream(reader, schema) : null;
  }

  /** The columns and row count of the next record batch, or null at the end of the stream. */
  next(): { readonly columns: Data[]; readonly rows: number } | null {
    const message = this.reader.readMessage();
    if (message === null) return null;
    if (!message.isRecordBatch()) {
      throw new Error(
        `expected a record batch message, got message type ${MessageHeader[message.headerType]}`,
      );
    }
    const body = this.reader.readMessageBody(message.bodyLength);
    const header = message.header() as unknown as BatchHeader;
    if (header.compression !== null) throw new Error('compressed record batches are not supported');
    const { nodes, buffers } = header;
    const columns: Data[] = [];
    let b = 0;
    /** The bytes of a buffer region, checked to lie in the body and to hold at least `needed` bytes. */
    const view = (region: { offset: number; length: number } | undefined, needed: number): Uint8Array => {
      if (region === undefined || region.length < needed || region.offset + region.length > body.byteLength) {
        throw new Error(`record batch buffer ${b} is missing, too short or past the end of the message body`);
      }
      return body.subarray(region.offset, region.offset + region.length);
    };
    const rows = header.length;
    for (let i = 0; i < this.types.length; i++) {
      const type = this.types[i]!;
      const node = nodes[i];
      if (node === undefined || node.length !== rows) {
        throw new Error(`field ${i} has ${node?.length ?? 'no'} values in a batch of ${rows} rows`);
      }
      const validity = node.nullCount > 0 ? view(buffers[b]!, (rows + 7) >> 3) : new Uint8Array(0);
      if (DataType.isUtf8(type)) {
        const offsets = view(buffers[b + 1]!, 4 * (rows + 1));
        const offsetView = new Int32Array(offsets.buffer, offsets.byteOffset, rows + 1);
        columns.push(
          new Data(type, 0, rows, node.nullCount, [offsetView, view(buffers[b + 2]!, 0), validity]),
        );
        b += 3;
      } else {
        const ArrayType = type.ArrayType as unknown as TypedArrayType;
        const bool = DataType.isBool(type);
        const data = view(buffers[b + 1]!, bool ? (rows + 7) >> 3 : rows * ArrayType.BYTES_PER_ELEMENT);
        const values = new ArrayType(data.buffer, data.byteOffset, bool ? data.byteLength : rows);
        columns.push(new Data(type, 0, rows, node.nullCount, [undefined, values, validity]));
        b += 2;
      }
    }
    return { columns, rows };
  }
}
