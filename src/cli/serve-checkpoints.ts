import { join } from 'node:path';
import { configFingerprint, type RunCheckpoint, runCheckpoint } from '../checkpoint/index.js';
import { ShoalError } from '../core/index.js';
import { FileCheckpointStore } from '../files/index.js';
import type { FrameDecoderSnapshot } from '../frames/index.js';
import type { KafkaCheckpointStore, KafkaSettings, TopicOutputs } from '../kafka/index.js';
import {
  modelConfig,
  type RunConfig,
  type SessionSnapshot,
  type StoredCheckpoint,
} from '../pipeline/index.js';
import type { ServeModels } from './serve-run.js';

/** Whether the service writes checkpoints (`kafka.checkpoint.dir` or `kafka.checkpoint.topic`). */
export function checkpointing(settings: KafkaSettings): boolean {
  return settings.checkpoint.dir !== null || settings.checkpoint.topic !== null;
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

type Parts = { decoder: FrameDecoderSnapshot; session: SessionSnapshot };

/** One scope's store: files, or its key on the compacted topic. */
interface ScopeStore {
  save(checkpoint: RunCheckpoint): Promise<string>;
  latest(): Promise<(StoredCheckpoint & { readonly checkpoint: RunCheckpoint }) | null>;
}

/**
 * The checkpoints of a running service: for each session (scope key `global`, or `topic/partition` with
 * scope `partition`), its snapshot — which holds, for every topic-partition it read, events and labels
 * alike, the next offset to read — with the events decoder's state, in the run checkpoint envelope. A
 * checkpoint is cut between two batches, so its model, its pending predictions and its offsets describe
 * one moment; the offsets go to the group only once the checkpoint is stored, so the group never claims
 * more than a checkpoint covers. A session is taken up from the newest good checkpoint of its scope —
 * on start (`global`) or when its partition is assigned (`partition`) — and its partitions are read from
 * the checkpoint's offsets (the group's commits count only when there is none).
 *
 * Stores: files under `kafka.checkpoint.dir` (the directory itself for `global`, a folder per partition
 * in it otherwise), or the compacted `kafka.checkpoint.topic`, which any instance of the group can read —
 * what lets the state of a partition follow it to another instance. A checkpoint is due after
 * `everyRows` rows read or `everySeconds` since the last one when rows were read; the service also writes
 * one when a rebalance begins and when it stops.
 *
 * @example
 * const checkpoints = new ServeCheckpoints(config, settings, version, Date.now(), null);
 * await checkpoints.connect();
 * await checkpoints.load(models, 'global'); // where it was read, or null for a fresh start
 * checkpoints.read('global', rows);
 * if (checkpoints.due(Date.now())) offsets = (await checkpoints.save(models, Date.now())).offsets;
 */
export class ServeCheckpoints {
  private readonly fingerprint: string;
  private readonly origin: ServeOrigin;
  private readonly stores = new Map<string, ScopeStore>();
  /** Scopes with rows read since their last checkpoint. */
  private readonly dirty = new Set<string>();
  /** Rows read since the last checkpoint. */
  private rows = 0;
  private last: number;

  constructor(
    config: RunConfig,
    private readonly settings: KafkaSettings,
    private readonly shoal: string,
    now: number,
    /** The Kafka store when `kafka.checkpoint.topic` is set, else null (files under `dir`). */
    private readonly kafkaStore: KafkaCheckpointStore | null,
  ) {
    this.fingerprint = configFingerprint(modelConfig(config));
    this.origin = {
      source: 'kafka',
      events: [...settings.events.topics],
      labels: settings.labels?.topic ?? null,
    };
    this.last = now;
  }

  /** Where the checkpoints are, for logs. */
  get place(): string {
    return this.settings.checkpoint.topic === null
      ? `directory ${this.settings.checkpoint.dir}`
      : `topic ${this.settings.checkpoint.topic}`;
  }

  async connect(): Promise<void> {
    await this.kafkaStore?.connect();
  }

  async disconnect(): Promise<void> {
    await this.kafkaStore?.disconnect();
  }

  /**
   * Take up the newest good checkpoint of scope `key` into `models`; returns where it was read and the
   * checkpoints refused on the way (place and reason), or null when the store holds none for it. A
   * checkpoint of another configuration or of other topics is refused with a message: the service must
   * not quietly start afresh nor go on with a model that does not belong to it.
   */
  async load(
    models: ServeModels,
    key: string,
  ): Promise<{ where: string; refused: readonly string[] } | null> {
    return (await this.loadAll(models, [key])).get(key) ?? null;
  }

  /**
   * `load` for several scopes at once (the partitions one join brings): the Kafka store reads its topic
   * once for all of them. Scopes the store holds nothing for are absent from the answer.
   */
  async loadAll(
    models: ServeModels,
    keys: readonly string[],
  ): Promise<Map<string, { where: string; refused: readonly string[] }>> {
    const found = new Map<string, StoredCheckpoint & { readonly checkpoint: RunCheckpoint }>();
    if (this.kafkaStore !== null) {
      for (const [key, stored] of await this.kafkaStore.latest(keys)) found.set(key, stored);
    } else {
      for (const key of keys) {
        const stored = await this.store(key).latest();
        if (stored !== null) found.set(key, stored);
      }
    }
    const out = new Map<string, { where: string; refused: readonly string[] }>();
    for (const [key, stored] of found) {
      const { state } = stored.checkpoint as RunCheckpoint<FrameDecoderSnapshot, SessionSnapshot>;
      if (state.fingerprint !== this.fingerprint) {
        throw new ShoalError(
          'invalid-config',
          `${stored.where} was written with another configuration (fingerprint ${state.fingerprint.slice(0, 12)}…, this one's ${this.fingerprint.slice(0, 12)}…); start with that configuration, or point kafka.checkpoint at an empty place`,
        );
      }
      if (JSON.stringify(state.labelTiming) !== JSON.stringify(this.origin)) {
        throw new ShoalError(
          'invalid-config',
          `${stored.where} was written by a service reading other topics (${JSON.stringify(state.labelTiming)}; this one reads ${JSON.stringify(this.origin)})`,
        );
      }
      models.restore(key, { decoder: state.decoder, session: state.session });
      out.set(key, { where: stored.where, refused: stored.refused });
    }
    return out;
  }

  /** Count rows read (events and labels) by the session of `key` towards the next checkpoint. */
  read(key: string, rows: number): void {
    this.rows += rows;
    if (rows > 0) this.dirty.add(key);
  }

  /** Whether a checkpoint is due by the cadence at wall time `now` (ms). */
  due(now: number): boolean {
    const c = this.settings.checkpoint.cadence;
    return this.rows >= c.everyRows || (this.rows > 0 && now - this.last >= c.everySeconds * 1000);
  }

  /**
   * Write a checkpoint of each session that read rows since its last one (of every session with `all`),
   * each once it is stored; returns where they went and the offsets they cover — the next offset to read
   * of each topic-partition — for the group commit. With `transaction` (exactly-once delivery, the Kafka
   * store), the checkpoints' records are not sent here but handed to it with the offsets, to commit in one
   * transaction with the outputs they cover; they count as stored once it resolves.
   */
  async save(
    models: ServeModels,
    now: number,
    all = false,
    transaction:
      | ((records: TopicOutputs[], offsets: ReadonlyMap<string, bigint>) => Promise<void>)
      | null = null,
  ): Promise<{ written: string[]; offsets: ReadonlyMap<string, bigint> }> {
    const written: string[] = [];
    const offsets = new Map<string, bigint>();
    const records: TopicOutputs[] = [];
    const stored: (() => void)[] = [];
    const keys = all ? models.keys() : [...this.dirty];
    for (const key of keys) {
      const parts = await models.parts(key);
      if (parts === null) continue;
      const checkpoint = this.envelope(parts, now);
      if (transaction !== null && this.kafkaStore !== null) {
        const prepared = await this.kafkaStore.prepare(key, checkpoint);
        records.push({ topic: prepared.topic, messages: prepared.messages });
        stored.push(prepared.stored);
        written.push(prepared.where);
      } else {
        written.push(await this.store(key).save(checkpoint));
      }
      for (const [stream, next] of Object.entries(parts.session.positions)) offsets.set(stream, BigInt(next));
    }
    if (transaction !== null && records.length > 0) await transaction(records, offsets);
    for (const done of stored) done();
    for (const key of keys) {
      this.dirty.delete(key);
      models.saved(key);
    }
    this.rows = 0;
    this.last = now;
    return { written, offsets };
  }

  /** Forget a scope whose partition went to another instance (its last checkpoint stays in the store). */
  drop(key: string): void {
    this.dirty.delete(key);
  }

  private envelope(parts: Parts, now: number): RunCheckpoint {
    return runCheckpoint(
      { ...parts, labelTiming: this.origin },
      { shoal: this.shoal, fingerprint: this.fingerprint, createdAt: new Date(now).toISOString() },
    );
  }

  private store(key: string): ScopeStore {
    let store = this.stores.get(key);
    if (store === undefined) {
      const c = this.settings.checkpoint;
      store =
        this.kafkaStore !== null
          ? this.kafkaStore.scope(key)
          : new FileCheckpointStore(key === 'global' ? c.dir! : join(c.dir!, key.replace('/', '-')), {
              keep: c.cadence.keep,
            });
      this.stores.set(key, store);
    }
    return store;
  }
}
