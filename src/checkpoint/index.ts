export { decodeCheckpoint, encodeCheckpoint } from './codec.js';
export { canonicalJson, configFingerprint } from './fingerprint.js';
export type { CheckpointMeta, RunCheckpoint, RunParts, RunState } from './run-checkpoint.js';
export { CHECKPOINT_KIND, CHECKPOINT_VERSION, runCheckpoint } from './run-checkpoint.js';
