export { createArrowWriter } from './arrow-write.js';
export type { FileStoreOptions } from './checkpoint-store.js';
export { FileCheckpointStore, readCheckpointFile } from './checkpoint-store.js';
export { createWriter, formatOf, readArrow, readFrames } from './formats.js';
export { fileLines, openInput } from './input-file.js';
export { deadLetterFile, journalFile, LineFile } from './ndjson-file.js';
export { createFile } from './output-file.js';
export { countRows } from './row-count.js';
export { createTextWriter } from './text-writer.js';
