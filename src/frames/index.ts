export { CHANGES_KEY, CLASSES_KEY, declaredChanges, FEATURES_KEY } from './arrow-batch.js';
export type { ArrowLayoutOptions } from './arrow-layout.js';
export { ArrowLayout, arrowStream } from './arrow-layout.js';
export type { ArrowByteSource } from './arrow-read.js';
export { arrowBufferFrames, arrowFrames, decodeArrowMessage } from './arrow-read.js';
export type { ColumnType } from './cells.js';
export { CellReader, DEFAULT_MISSING } from './cells.js';
export type { Binding, BindProblem, SourceColumn } from './columns.js';
export { CsvParser } from './csv-parser.js';
export { csvFrames } from './csv-read.js';
export { csvField, csvLayout } from './csv-write.js';
export type { DeclaredSchema, FrameDecoderSnapshot, FrameDecoderState } from './decoder.js';
export { FrameDecoder } from './decoder.js';
export type { Decoded, Frame, FrameOrigin, MessageDecode, PositionUnit, Rejection } from './frame.js';
export { cloneFrame, describePosition, describeRow } from './frame.js';
export type { LabelMode } from './label-dictionary.js';
export { decodeJsonRecord, ndjsonFrames } from './ndjson-read.js';
export { ndjsonLayout } from './ndjson-write.js';
export type { FeatureSpec, FrameOptions, LabelsAs } from './options.js';
export {
  checkFeatureSpecs,
  DEFAULT_LABEL,
  DEFAULT_MAX_CLASSES,
  DEFAULT_VOCABULARY,
  LABELS_AS,
} from './options.js';
export type { ReadOptions } from './read-options.js';
export { DEFAULT_BATCH_ROWS } from './read-options.js';
export type { ScoreRows } from './score-ipc.js';
export { encodeScores, SCORES_CONTENT_TYPE } from './score-ipc.js';
export type { LineChunk } from './text-frames.js';
export type { FrameFormat, FrameWriter, RowBlock, TextLayout, WriterOptions } from './writer.js';
export { DEFAULT_WRITE_BATCH_ROWS, WriterPlan } from './writer.js';
