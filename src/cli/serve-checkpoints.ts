import { configFingerprint, type RunCheckpoint, runCheckpoint } from '../checkpoint/index.js';
import { ShoalError } from '../core/index.js';
import { FileCheckpointStore } from '../files/index.js';
import type { FrameDecoderSnapshot } from '../frames/index.js';
import type { KafkaSettings } from '../kafka/index.js';
import type { CheckpointCadence, RunConfig, SessionSnapshot } from '../pipeline/index.js';
import type { ServeModels } from './serve-run.js';

/** The `checkpoints:` section of a service's configuration. */
export interface ServeCheckpointSettings {
  /** The directory of the file store. */
  readonly dir: string;
  readonly cadence: CheckpointCadence;
}

/**
 * What a service checkpoint says about where its rows came from, beside the run checkpoint's
 * configuration fingerprint: a checkpoint of other topics is not taken up.
 */
interface ServeOrigin {
  readonly source: 'kafka';
  readonly events: readonly string[];
  readonly labels: string | null;
}

/**
 * The checkpoints of a running service (scope `global`): the session's snapshot — which holds, for every
 * topic-partition it read, events and labels alike, the next offset to read — with the events decoder's
 * state, in the run checkpoint envelope, saved to the file store. A checkpoint is cut between two batches,
 * so its model, its pending predictions and its offsets describe one moment; the offsets go to the group
 * only once the checkpoint is on disk, so the group never claims more than a checkpoint covers. On start
 * the newest good checkpoint is taken up and each partition is read from its offsets (the group's
 * commits count only when there is none).
 *
 * A checkpoint is due after `everyRows` rows read or `everySeconds` since the last one when rows were read;
 * the service also writes one when a rebalance begins and when it stops.
 *
 * @example
 * const checkpoints = new ServeCheckpoints(settings, config, kafka, version);
 * const taken = await checkpoints.load(models); // the checkpoint's place, or null for a fresh start
 * checkpoints.read(rows);
 * if (checkpoints.due(Date.now())) offsets = await checkpoints.save(models, Date.now());
 */
export class ServeCheckpoints {
  readonly store: FileCheckpointStore;
  private readonly fingerprint: string;
  private readonly origin: ServeOrigin;
  /** Rows read since the last checkpoint. */
  private rows = 0;
  private last: number;

  constructor(
    private readonly settings: ServeCheckpointSettings,
    config: RunConfig,
    kafka: KafkaSettings,
    private readonly shoal: string,
    now: number,
  ) {
    this.store = new FileCheckpointStore(settings.dir, { keep: settings.cadence.keep });
    this.fingerprint = configFingerprint(config);
    this.origin = {
      source: 'kafka',
      events: [...kafka.events.topics],
      labels: kafka.labels?.topic ?? null,
    };
    this.last = now;
  }

  /**
   * Take up the newest good checkpoint in the store into `models`; returns where it was read and the
   * checkpoints refused on the way (file and reason), or null when the store holds none. A checkpoint of
   * another configuration or of other topics is refused with a message: the service must not quietly
   * start afresh nor go on with a model that does not belong to it.
   */
  async load(models: ServeModels): Promise<{ where: string; refused: readonly string[] } | null> {
    const stored = await this.store.latest();
    if (stored === null) return null;
    const { state } = stored.checkpoint as RunCheckpoint<FrameDecoderSnapshot, SessionSnapshot>;
    if (state.fingerprint !== this.fingerprint) {
      throw new ShoalError(
        'invalid-config',
        `${stored.where} was written with another configuration (fingerprint ${state.fingerprint.slice(0, 12)}…, this one's ${this.fingerprint.slice(0, 12)}…); start with that configuration, or point checkpoints.dir at an empty directory`,
      );
    }
    if (JSON.stringify(state.labelTiming) !== JSON.stringify(this.origin)) {
      throw new ShoalError(
        'invalid-config',
        `${stored.where} was written by a service reading other topics (${JSON.stringify(state.labelTiming)}; this one reads ${JSON.stringify(this.origin)})`,
      );
    }
    models.restore('global', { decoder: state.decoder, session: state.session });
    return { where: stored.where, refused: stored.refused };
  }

  /** Count rows read (events and labels) towards the next checkpoint. */
  read(rows: number): void {
    this.rows += rows;
  }

  /** Whether a checkpoint is due by the cadence at wall time `now` (ms). */
  due(now: number): boolean {
    const c = this.settings.cadence;
    return this.rows >= c.everyRows || (this.rows > 0 && now - this.last >= c.everySeconds * 1000);
  }

  /**
   * Write a checkpoint of the global session as it is now (once it is on disk); returns the offsets it
   * covers — the next offset to read of each topic-partition — for the group commit, or null when there
   * is no session yet.
   */
  async save(
    models: ServeModels,
    now: number,
  ): Promise<{ where: string; offsets: ReadonlyMap<string, bigint> } | null> {
    const parts = models.parts('global');
    if (parts === null) return null;
    const checkpoint = runCheckpoint(
      { ...parts, labelTiming: this.origin },
      { shoal: this.shoal, fingerprint: this.fingerprint, createdAt: new Date(now).toISOString() },
    );
    const where = await this.store.save(checkpoint);
    this.rows = 0;
    this.last = now;
    models.saved('global');
    const offsets = new Map<string, bigint>();
    for (const [stream, next] of Object.entries(parts.session.positions)) offsets.set(stream, BigInt(next));
    return { where, offsets };
  }
}
