import type { FileHandle } from 'node:fs/promises';
import { AsyncByteQueue, RecordBatchFileWriter } from 'apache-arrow';
import { ShoalError } from '../core/index.js';
import {
  ArrowLayout,
  type FrameWriter,
  type RowBlock,
  type WriterOptions,
  WriterPlan,
} from '../frames/index.js';
import { createFile } from './output-file.js';

/**
 * The bytes Arrow's writer produces, collected in order instead of queued for a reader, so that each
 * record batch goes to disk (awaited) before the next is built and memory stays bounded.
 */
class CollectedBytes extends AsyncByteQueue {
  chunks: Uint8Array[] = [];
  override write(value: Uint8Array): void {
    if (value.byteLength > 0) this.chunks.push(value);
  }
}

/**
 * An Arrow IPC file writer (Apache Arrow, "IPC File Format"): record batches of `batchRows` rows
 * (10,000 by default), laid out by `ArrowLayout` (features, the label as class names or codes, the id;
 * the schema metadata records the features and classes, so reading the file back gives the same codes,
 * and the stream's true change points when given).
 *
 * @example
 * const writer = await createArrowWriter('sea.arrow', { schema: gen.schema, classes: gen.classes });
 */
export async function createArrowWriter(path: string, options: WriterOptions): Promise<FrameWriter> {
  const plan = new WriterPlan(options);
  const { width, batchRows } = plan;
  const layout = new ArrowLayout({
    id: plan.id,
    schema: plan.schema,
    categories: plan.categories,
    label: plan.label,
    classes: plan.classes,
    labelsAsCodes: plan.labelsAsCodes,
    ...(options.changes === undefined ? {} : { changes: options.changes }),
  });

  const handle: FileHandle = await createFile(path);
  const sink = new CollectedBytes();
  const writer = new RecordBatchFileWriter();
  writer.reset(sink, layout.schema);
  const pendingValues = new Float64Array(batchRows * width);
  const pendingLabels = new Float64Array(batchRows);
  let pendingIds: string[] = [];
  let pending = 0;
  let rowsWritten = 0;
  let closed = false;

  const drain = async (): Promise<void> => {
    const chunks = sink.chunks;
    sink.chunks = [];
    if (chunks.length > 0) await handle.writev(chunks);
  };

  const flush = async (): Promise<void> => {
    if (pending === 0) return;
    writer.write(layout.batch(pending, pendingValues, pendingLabels, pendingIds));
    pending = 0;
    pendingIds = [];
    await drain();
  };

  return {
    path,
    get rowsWritten() {
      return rowsWritten;
    },
    async write(block: RowBlock) {
      if (closed) throw new ShoalError('invalid-parameter', `${path}: the writer is closed`);
      plan.check(block, path);
      for (let r = 0; r < block.rows; r++) {
        pendingValues.set(block.values.subarray(r * width, (r + 1) * width), pending * width);
        pendingLabels[pending] = block.labels === null ? Number.NaN : block.labels[r]!;
        if (plan.id !== null) pendingIds.push(block.ids![r]!);
        pending++;
        rowsWritten++;
        if (pending === batchRows) await flush();
      }
    },
    async close() {
      if (closed) return;
      closed = true;
      await flush();
      writer.finish();
      await drain();
      await handle.close();
    },
  };
}
