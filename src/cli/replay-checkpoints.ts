import { configFingerprint, type RunCheckpoint, runCheckpoint } from '../checkpoint/index.js';
import { ShoalError } from '../core/index.js';
import { FileCheckpointStore } from '../files/index.js';
import { FrameDecoder, type FrameDecoderSnapshot } from '../frames/index.js';
import {
  LearningSession,
  modelConfig,
  type RunConfig,
  type SessionOptions,
  type SessionSnapshot,
} from '../pipeline/index.js';
import type { LabelTiming } from './replay-feed.js';
import type { Terminal } from './terminal.js';

/** Rows between checkpoints when `--checkpoint` is given without `--checkpoint-every`. */
export const DEFAULT_CHECKPOINT_EVERY = 10_000;

/** When a replay's labels become known, and its time column: a resumed run must give the same. */
export interface ReplayTiming {
  readonly labels: LabelTiming;
  readonly time: string | null;
}

/** The options that set a replay's timing, as they are given on the command line. */
function timingOptions(t: ReplayTiming): string {
  const l = t.labels;
  const labels =
    l.kind === 'inline'
      ? []
      : l.kind === 'delay'
        ? [`--label-delay ${l.rows}`]
        : l.kind === 'delay-column'
          ? [`--label-delay-column ${l.column}`]
          : [`--labels ${l.path}`, ...(l.time === null ? [] : [`--label-time ${l.time}`])];
  const all = [...labels, ...(t.time === null ? [] : [`--time ${t.time}`])];
  return all.length === 0 ? 'inline labels, no --time' : all.join(' ');
}

/** A run taken up from a checkpoint: its decoder and session, and the row of the file it goes on at. */
export interface ResumedRun {
  readonly decoder: FrameDecoder;
  readonly session: LearningSession;
  readonly from: bigint;
}

/**
 * The checkpoints of one replay: a file store, the configuration's fingerprint, and the next row count
 * at which a checkpoint is due. A checkpoint is taken between batches, once the rows scored reach the
 * next multiple of `every`, and once more at the end of the run.
 */
export class ReplayCheckpoints {
  readonly store: FileCheckpointStore;
  private readonly every: number;
  private readonly fingerprint: string;
  private readonly shoal: string;
  private readonly timing: ReplayTiming;
  /** The run's threads (a checkpoint goes on with them, whatever the run that wrote it had). */
  private readonly threads: number;
  private due: number;
  /** Told when a checkpoint is on disk (telemetry's checkpoint age). */
  saved: (() => void) | null = null;

  constructor(
    dir: string,
    every: number,
    config: RunConfig,
    shoal: string,
    timing: ReplayTiming,
    scored = 0,
  ) {
    this.store = new FileCheckpointStore(dir);
    this.timing = timing;
    this.threads = config.threads;
    this.every = every;
    this.fingerprint = configFingerprint(modelConfig(config));
    this.shoal = shoal;
    this.due = this.after(scored);
  }

  /**
   * Take up the run whose newest good checkpoint is in the store. Checkpoints refused on the way are told
   * on `terminal` (file and reason); a checkpoint written with another configuration or other label
   * timing options (`--labels`, `--label-time`, `--label-delay`, `--label-delay-column`, `--time`) is
   * refused, and so is a store that holds none.
   */
  async resume(
    file: string,
    options: Omit<SessionOptions, 'config'>,
    terminal: Terminal,
  ): Promise<ResumedRun> {
    const stored = await this.store.latest();
    if (stored === null) {
      throw new ShoalError(
        'not-found',
        `replay --resume: ${this.store.dir} holds no checkpoint to go on from`,
      );
    }
    for (const why of stored.refused) terminal.err(`shoal replay: refused ${why}\n`);
    if (stored.refused.length > 0) terminal.err(`shoal replay: going on from ${stored.where}\n`);
    const { state } = stored.checkpoint as RunCheckpoint<FrameDecoderSnapshot, SessionSnapshot>;
    if (state.fingerprint !== this.fingerprint) {
      throw new ShoalError(
        'invalid-config',
        `replay --resume: ${stored.where} was written by a run with another configuration (fingerprint ${state.fingerprint.slice(0, 12)}…, this run's ${this.fingerprint.slice(0, 12)}…); resume with the options and configuration file of the first run`,
      );
    }
    const timing = state.labelTiming as ReplayTiming | undefined;
    if (timing === undefined || JSON.stringify(timing) !== JSON.stringify(this.timing)) {
      const first = timing === undefined ? 'no label timing (an older checkpoint)' : timingOptions(timing);
      throw new ShoalError(
        'invalid-config',
        `replay --resume: ${stored.where} was written by a run with other label timing options (${first}; this run: ${timingOptions(this.timing)}); resume with the first run's --labels, --label-time, --label-delay, --label-delay-column and --time`,
      );
    }
    const positions = state.session.positions;
    const at = positions[file];
    if (at === undefined) {
      throw new ShoalError(
        'invalid-snapshot',
        `replay --resume: ${stored.where} has no position in ${file} (it read ${Object.keys(positions).join(', ') || 'nothing yet'})`,
      );
    }
    const session = LearningSession.restore(state.session, { ...options, threads: this.threads });
    this.due = this.after(session.scored);
    return { decoder: FrameDecoder.restore(state.decoder), session, from: BigInt(at) };
  }

  /** Save a checkpoint when one is due after the batch just handled. */
  async afterBatch(session: LearningSession, decoder: FrameDecoder): Promise<void> {
    if (session.scored < this.due) return;
    await this.save(session, decoder);
    this.due = this.after(session.scored);
  }

  /** Save a checkpoint of the run as it is now; resolves once it is on disk. */
  async save(session: LearningSession, decoder: FrameDecoder): Promise<string> {
    const checkpoint = runCheckpoint(
      { decoder: decoder.snapshot(), session: await session.snapshotAsync(), labelTiming: this.timing },
      { shoal: this.shoal, fingerprint: this.fingerprint, createdAt: new Date().toISOString() },
    );
    const where = await this.store.save(checkpoint);
    this.saved?.();
    return where;
  }

  private after(scored: number): number {
    return (Math.floor(scored / this.every) + 1) * this.every;
  }
}
