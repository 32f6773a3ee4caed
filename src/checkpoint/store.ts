import type { RunCheckpoint } from './run-checkpoint.js';

/**
 * Where run checkpoints are kept. `save` makes a checkpoint durable before it resolves (a crash after it
 * resolves never loses it, a crash during it never leaves a half-written one in its place); `newest`
 * gives the newest checkpoint that reads back intact, and — as values, not exceptions — every newer one
 * it had to refuse and why.
 */
export interface CheckpointStore {
  save(checkpoint: RunCheckpoint): Promise<SavedCheckpoint>;
  newest(): Promise<CheckpointLoad>;
}

export interface SavedCheckpoint {
  /** Where it was written (a file path, a topic and offset, …). */
  readonly name: string;
}

export interface RefusedCheckpoint {
  readonly name: string;
  /** Why it was refused, naming the file: cut short, bytes changed, another format version, … */
  readonly reason: string;
}

export interface CheckpointLoad {
  /** The newest checkpoint that read back intact, or null when there is none. */
  readonly found: { readonly name: string; readonly checkpoint: RunCheckpoint } | null;
  /** Newer checkpoints that were refused, newest first. */
  readonly refused: readonly RefusedCheckpoint[];
}
