import { createHash } from 'node:crypto';
import type { Admin, Kafka, Message, Producer } from 'kafkajs';
import type { Logger } from 'pino';
import { decodeCheckpoint, encodeCheckpoint, type RunCheckpoint } from '../checkpoint/index.js';
import { ShoalError } from '../core/index.js';
import type { CheckpointStore, StoredCheckpoint } from '../pipeline/index.js';
import { persist } from './backoff.js';

/**
 * Run checkpoints on a compacted Kafka topic, so that the state of a partition can be taken up by
 * whichever instance is assigned it. Records are keyed by pipeline (the consumer group) and scope
 * (`global` or `topic/partition`):
 *
 *   key ["shoal-checkpoint", pipeline, scope, "chunk", slot, i]   value: bytes i·chunk … of the checkpoint
 *   key ["shoal-checkpoint", pipeline, scope, "manifest"]         value: JSON { sequence, slot, chunks, bytes, sha256, createdAt }
 *
 * A save writes its chunks into the slot the current manifest does not point at, then the manifest —
 * last, once every chunk was acknowledged — so a save cut short leaves the previous manifest pointing at
 * intact chunks: a half-written checkpoint is never taken for a whole one. Compaction keeps the newest
 * value of each key, so the topic holds about two checkpoints per scope once its segments roll. The first
 * read scans the topic from its start, later reads from where the last one ended; each keeps where the
 * newest value of every key is, and checks the manifest's length and SHA-256 (FIPS 180-4) over the chunks
 * before the checkpoint's own checks.
 *
 * @example
 * const store = new KafkaCheckpointStore(kafka, { topic: 'shoal-checkpoints', pipeline: 'legs' }, log);
 * await store.connect();
 * await store.scope('legs/3').save(checkpoint);
 * const stored = await store.scope('legs/3').latest();
 */
export interface KafkaStoreOptions {
  /** The compacted topic; created (one partition, `cleanup.policy=compact`) when missing. */
  readonly topic: string;
  /** The pipeline whose checkpoints these are (the service's consumer group). */
  readonly pipeline: string;
  /** Bytes per chunk, well below the broker's `message.max.bytes` (1 MiB by default). */
  readonly chunkBytes?: number;
}

interface Manifest {
  readonly sequence: number;
  readonly slot: 0 | 1;
  readonly chunks: number;
  readonly bytes: number;
  readonly sha256: string;
  readonly createdAt: string;
}

interface Located {
  readonly partition: number;
  readonly offset: bigint;
  readonly sequence: string | undefined;
}

const CHUNK_BYTES = 256 * 1024;
/** Readers of one process, numbered so that their groups' names never meet. */
let readers = 0;
const SEQUENCE_HEADER = 'shoal-sequence';

export class KafkaCheckpointStore {
  private readonly producer: Producer;
  private readonly admin: Admin;
  private readonly chunkBytes: number;
  /** The manifest each scope's next save follows (read on first use). */
  private readonly manifests = new Map<string, Manifest | null>();
  /** Where the newest record of every key read so far is, and the manifests' values. */
  private readonly located = new Map<string, Located>();
  private readonly manifestValues = new Map<string, Buffer | null>();
  /** Where the next read of each partition starts (absent: its start). */
  private position = new Map<number, bigint>();
  private readCount = 0;

  constructor(
    private readonly kafka: Kafka,
    private readonly options: KafkaStoreOptions,
    private readonly log: Logger,
  ) {
    this.producer = kafka.producer({
      allowAutoTopicCreation: false,
      idempotent: true,
      maxInFlightRequests: 1,
    });
    this.admin = kafka.admin();
    this.chunkBytes = options.chunkBytes ?? CHUNK_BYTES;
  }

  /** Connect, and create the compacted topic when it is missing. */
  async connect(): Promise<void> {
    const options = { log: this.log, stopped: () => false };
    await persist('connect the checkpoint store', () => this.admin.connect(), options);
    await persist('connect the checkpoint producer', () => this.producer.connect(), options);
    const topics = await this.admin.listTopics();
    if (!topics.includes(this.options.topic)) {
      await this.admin.createTopics({
        topics: [
          {
            topic: this.options.topic,
            numPartitions: 1,
            // Compaction only cleans segments the broker has rolled: with Kafka's default segment size
            // (1 GiB) a topic of 3 MB checkpoints saved every few seconds would hold hundreds of saves
            // that every new reader reads. A segment rolled every 10 minutes or 64 MiB keeps it near two
            // saves per scope (our choice, sized for checkpoints of a few MB).
            configEntries: [
              { name: 'cleanup.policy', value: 'compact' },
              { name: 'segment.ms', value: String(10 * 60 * 1000) },
              { name: 'segment.bytes', value: String(64 * 2 ** 20) },
            ],
          },
        ],
        waitForLeaders: true,
      });
    }
  }

  async disconnect(): Promise<void> {
    await this.producer.disconnect();
    await this.admin.disconnect();
  }

  /** The store of one scope, as the sessions' `CheckpointStore` port. */
  scope(scope: string): CheckpointStore & {
    latest(): Promise<(StoredCheckpoint & { readonly checkpoint: RunCheckpoint }) | null>;
  } {
    return {
      save: (checkpoint) => this.save(scope, checkpoint as RunCheckpoint),
      latest: async () => (await this.latest([scope])).get(scope) ?? null,
    };
  }

  /** Save one scope's checkpoint: chunks first, the manifest last. Returns where it is. */
  async save(scope: string, checkpoint: RunCheckpoint): Promise<string> {
    const prepared = await this.prepare(scope, checkpoint);
    // One acknowledged send per record, in order: the manifest goes only after every chunk is stored.
    for (const message of prepared.messages) {
      await this.producer.send({ topic: this.options.topic, acks: -1, messages: [message] });
    }
    prepared.stored();
    return prepared.where;
  }

  /**
   * The records of one save of `scope` — its chunks, then its manifest — for a caller that writes them
   * itself (in a transaction with the outputs and offsets they belong to); `stored()` once they are.
   */
  async prepare(
    scope: string,
    checkpoint: RunCheckpoint,
  ): Promise<{ topic: string; messages: Message[]; where: string; stored: () => void }> {
    if (!this.manifests.has(scope)) await this.latest([scope]);
    const previous = this.manifests.get(scope) ?? null;
    const bytes = encodeCheckpoint(checkpoint);
    const sequence = (previous?.sequence ?? -1) + 1;
    const slot: 0 | 1 = previous?.slot === 0 ? 1 : 0;
    const chunks = Math.max(1, Math.ceil(bytes.length / this.chunkBytes));
    const headers = { [SEQUENCE_HEADER]: String(sequence) };
    const messages: Message[] = [];
    for (let i = 0; i < chunks; i++) {
      messages.push({
        key: this.key(scope, 'chunk', slot, i),
        value: bytes.subarray(i * this.chunkBytes, (i + 1) * this.chunkBytes),
        headers,
      });
    }
    const manifest: Manifest = {
      sequence,
      slot,
      chunks,
      bytes: bytes.length,
      sha256: createHash('sha256').update(bytes).digest('hex'),
      createdAt: checkpoint.state.createdAt,
    };
    messages.push({ key: this.key(scope, 'manifest'), value: JSON.stringify(manifest), headers });
    return {
      topic: this.options.topic,
      messages,
      where: this.where(scope, sequence),
      stored: () => this.manifests.set(scope, manifest),
    };
  }

  /**
   * The newest good checkpoint of each of `scopes` (absent: none). A manifest whose chunks are missing,
   * of another save or changed is refused with its reason; there is no older one to fall back on once a
   * manifest is written, since the chunks it replaced are overwritten by the next save.
   *
   * The store reads its topic from where its last read ended (the whole topic only the first time),
   * remembering where the newest record of every key is and the manifests' values, and keeps the chunks'
   * values of the asked scopes only for this call. Chunks written before that point are read again from
   * their own offsets, not from the topic's start.
   */
  async latest(
    scopes: readonly string[],
  ): Promise<Map<string, StoredCheckpoint & { readonly checkpoint: RunCheckpoint }>> {
    const readBefore = this.readCount;
    const wanted = new Set(scopes);
    const kept = new Map<string, Buffer>();
    const high = await this.ends();
    await this.read(this.position, high, (key, record, value) => {
      this.located.set(key, record);
      const [, pipeline, scope, part] = JSON.parse(key) as [string, string, string, string];
      if (pipeline !== this.options.pipeline) return;
      if (part === 'manifest') this.manifestValues.set(key, value);
      else if (value !== null && wanted.has(scope)) kept.set(key, value);
      else kept.delete(key);
    });
    this.position = high;

    const needed = new Map<string, { scope: string; manifest: Manifest; keys: string[] }>();
    for (const scope of scopes) {
      const raw = this.manifestValues.get(this.key(scope, 'manifest'));
      if (raw === undefined || raw === null) {
        this.manifests.set(scope, null);
        continue;
      }
      const manifest = JSON.parse(raw.toString('utf8')) as Manifest;
      this.manifests.set(scope, manifest);
      const keys = Array.from({ length: manifest.chunks }, (_, i) =>
        this.key(scope, 'chunk', manifest.slot, i),
      );
      needed.set(scope, { scope, manifest, keys });
    }
    await this.fetchChunks(
      [...needed.values()].flatMap((n) => n.keys).filter((key) => !kept.has(key)),
      kept,
    );

    this.log.debug({ scopes, records: this.readCount - readBefore }, 'read the checkpoint topic');

    const out = new Map<string, StoredCheckpoint & { readonly checkpoint: RunCheckpoint }>();
    for (const { scope, manifest, keys } of needed.values()) {
      const where = this.where(scope, manifest.sequence);
      const parts: Buffer[] = [];
      for (const [i, key] of keys.entries()) {
        const at = this.located.get(key);
        const value = kept.get(key);
        if (at === undefined || value === undefined || at.sequence !== String(manifest.sequence)) {
          throw new ShoalError(
            'invalid-snapshot',
            `checkpoint ${where}: chunk ${i + 1} of ${manifest.chunks} is ${at === undefined ? 'missing' : `of save ${at.sequence}`}`,
          );
        }
        parts.push(value);
      }
      const bytes = Buffer.concat(parts);
      const digest = createHash('sha256').update(bytes).digest('hex');
      if (bytes.length !== manifest.bytes || digest !== manifest.sha256) {
        throw new ShoalError(
          'invalid-snapshot',
          `checkpoint ${where}: its chunks hold ${bytes.length} bytes (sha256 ${digest.slice(0, 12)}…), the manifest says ${manifest.bytes} (${manifest.sha256.slice(0, 12)}…)`,
        );
      }
      out.set(scope, { where, checkpoint: decodeCheckpoint(bytes, where), refused: [] });
    }
    return out;
  }

  /** How many records the store has read from its topic (every read, for the logs and the tests). */
  get recordsRead(): number {
    return this.readCount;
  }

  /** The values of `keys`, read from the span of the topic that holds their newest records. */
  private async fetchChunks(keys: readonly string[], into: Map<string, Buffer>): Promise<void> {
    const from = new Map<number, bigint>();
    const to = new Map<number, bigint>();
    const want = new Map<string, Located>();
    for (const key of keys) {
      const at = this.located.get(key);
      if (at === undefined) continue;
      want.set(key, at);
      const lo = from.get(at.partition);
      if (lo === undefined || at.offset < lo) from.set(at.partition, at.offset);
      const hi = to.get(at.partition);
      if (hi === undefined || at.offset + 1n > hi) to.set(at.partition, at.offset + 1n);
    }
    if (want.size === 0) return;
    await this.read(from, to, (key, record, value) => {
      const at = want.get(key);
      if (
        at !== undefined &&
        value !== null &&
        at.partition === record.partition &&
        at.offset === record.offset
      )
        into.set(key, value);
    });
  }

  /** The end of every partition of the topic now. */
  private async ends(): Promise<Map<number, bigint>> {
    const offsets = await this.admin.fetchTopicOffsets(this.options.topic);
    return new Map(offsets.map((e) => [e.partition, BigInt(e.high)]));
  }

  /**
   * Every record of the topic from `from` (a partition absent there: from its start) up to `to`, handed
   * to `each` in order, by a consumer of a group of its own. Its seeks are made in the tick `run` is
   * called, before the consumer has joined, so its first fetch of each partition already starts there
   * (kafkajs's own `admin.setOffsets` relies on the same).
   */
  private async read(
    from: ReadonlyMap<number, bigint>,
    to: ReadonlyMap<number, bigint>,
    each: (key: string, record: Located, value: Buffer | null) => void,
  ): Promise<void> {
    const topic = this.options.topic;
    const left = new Map([...to].filter(([p, end]) => end > (from.get(p) ?? 0n)));
    if (left.size === 0) return;
    const starts = [...(await this.ends())].map(([partition, end]) => ({
      partition,
      offset: String(left.has(partition) ? (from.get(partition) ?? 0n) : end),
    }));
    const groupId = `${this.options.pipeline}-checkpoint-reader-${process.pid}-${Date.now().toString(36)}-${(readers++).toString(36)}`;
    const consumer = this.kafka.consumer({ groupId, maxWaitTimeInMs: 200, allowAutoTopicCreation: false });
    try {
      await consumer.connect();
      await consumer.subscribe({ topic, fromBeginning: true });
      await new Promise<void>((done, fail) => {
        // Progress is read from the end of each batch processed, including batches kafkajs does not hand
        // over because all they held were records of aborted transactions and transaction markers.
        consumer.on(consumer.events.END_BATCH_PROCESS, ({ payload }) => {
          const end = left.get(payload.partition);
          if (end !== undefined && BigInt(payload.lastOffset) + 1n >= end) left.delete(payload.partition);
          if (left.size === 0) done();
        });
        consumer
          .run({
            autoCommit: false,
            eachBatch: async ({ batch }) => {
              const start = from.get(batch.partition) ?? 0n;
              const end = to.get(batch.partition) ?? 0n;
              for (const m of batch.messages) {
                const offset = BigInt(m.offset);
                if (m.key === null || offset < start || offset >= end) continue;
                this.readCount++;
                const sequence = m.headers?.[SEQUENCE_HEADER];
                each(
                  m.key.toString('utf8'),
                  {
                    partition: batch.partition,
                    offset,
                    sequence: sequence === undefined ? undefined : String(sequence),
                  },
                  m.value,
                );
              }
            },
          })
          .catch(fail);
        for (const start of starts) consumer.seek({ topic, ...start });
      });
    } finally {
      await consumer.disconnect();
      await this.admin.deleteGroups([groupId]).catch(() => undefined);
    }
  }

  private key(scope: string, ...rest: (string | number)[]): string {
    return JSON.stringify(['shoal-checkpoint', this.options.pipeline, scope, ...rest]);
  }

  private where(scope: string, sequence: number): string {
    return `kafka:${this.options.topic} ${this.options.pipeline} ${scope} #${sequence}`;
  }
}
