export type { FileStoreOptions } from './checkpoint-store.js';
export { FileCheckpointStore, readCheckpointFile } from './checkpoint-store.js';
