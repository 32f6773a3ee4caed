import { RecordBatchReader, RecordBatchStreamWriter, tableFromArrays } from 'apache-arrow';
import { Rng } from '../../src/core/index.js';
import { arrowBufferFrames, decodeArrowMessage, FrameDecoder } from '../../src/frames/index.js';
import { type BenchFn, floorRate, medianRate } from './harness.js';

/**
 * Arrow IPC → frames: record batches of 1,000 rows × 10 float64 columns, decoded from bytes already in
 * memory (so the disk is not measured) into row-major frames. Two forms: one IPC stream of many batches
 * (replaying a recorded stream) and one IPC message per batch (the Kafka form, schema parsed per message).
 * The floor is a bare loop over the decoded values, the cost of touching each row once; beside it, Arrow
 * JS's own `RecordBatchReader` iterating the same bytes without making frames, for scale.
 */
const WIDTH = 10;
const BATCH_ROWS = 1000;

function ipcBytes(batches: number, seed: number): { stream: Uint8Array; messages: Uint8Array[] } {
  const rng = new Rng(seed);
  const columns: Record<string, Float64Array> = {};
  for (let j = 0; j < WIDTH; j++) {
    const column = new Float64Array(BATCH_ROWS);
    for (let r = 0; r < BATCH_ROWS; r++) column[r] = rng.next() * 100 - 50;
    columns[`x${j}`] = column;
  }
  const batch = tableFromArrays(columns).batches[0]!;
  const writer = new RecordBatchStreamWriter();
  for (let b = 0; b < batches; b++) writer.write(batch);
  writer.finish();
  const one = new RecordBatchStreamWriter();
  one.write(batch);
  one.finish();
  const message = one.toUint8Array(true);
  return { stream: writer.toUint8Array(true), messages: Array.from({ length: batches }, () => message) };
}

export const bench: BenchFn = (options) => {
  const batches = options.quick ? 50 : 500;
  const runs = options.quick ? 3 : 7;
  const rows = batches * BATCH_ROWS;
  const { stream, messages } = ipcBytes(batches, 11);
  const decoder = new FrameDecoder({ label: null });

  const rowsPerSecond = medianRate(
    rows,
    () => {
      let s = 0;
      for (const { frame } of arrowBufferFrames(stream, decoder, 'bench'))
        s += frame.values[frame.rows * WIDTH - 1]!;
      return s;
    },
    runs,
    2,
  );
  const messageRowsPerSecond = medianRate(
    rows,
    () => {
      let s = 0;
      for (const message of messages) {
        const result = decodeArrowMessage(decoder, message, 'bench');
        if (result.ok) s += result.frame.values[0]!;
      }
      return s;
    },
    runs,
    2,
  );
  const arrowReaderRowsPerSecond = medianRate(
    rows,
    () => {
      let s = 0;
      for (const batch of RecordBatchReader.from(stream)) s += batch.numRows;
      return s;
    },
    runs,
    2,
  );
  const sample = new Float64Array(rows * WIDTH);
  let at = 0;
  for (const { frame } of arrowBufferFrames(stream, decoder, 'bench')) {
    sample.set(frame.values, at);
    at += frame.values.length;
  }
  const floor = floorRate(sample, rows, runs);
  return {
    title: `Arrow IPC decode: ${batches} batches × ${BATCH_ROWS} rows × ${WIDTH} float64 → frames`,
    rows: [
      {
        name: 'IPC stream in memory → frames',
        rate: rowsPerSecond,
        unit: 'rows/s',
        ofFloor: rowsPerSecond / floor,
        note: 'target ≥ 10M rows/s',
      },
      {
        name: 'one IPC message per batch (Kafka form)',
        rate: messageRowsPerSecond,
        unit: 'rows/s',
        ofFloor: messageRowsPerSecond / floor,
      },
      { name: 'floor: one pass over the decoded rows', rate: floor, unit: 'rows/s' },
      {
        name: 'Arrow JS RecordBatchReader alone, no frames',
        rate: arrowReaderRowsPerSecond,
        unit: 'rows/s',
        note: 'for scale',
      },
    ],
    json: { rowsPerSecond, messageRowsPerSecond, floorRowsPerSecond: floor, arrowReaderRowsPerSecond },
  };
};
