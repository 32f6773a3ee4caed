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
 * value of each key, so the topic holds at most two checkpoints per scope. Reading scans the topic from
 * its start to the end it had when the read began, keeps the newest value of each key, and checks the
 * manifest's length and SHA-256 (FIPS 180-4) over the chunks before the checkpoint's own checks.
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

const CHUNK_BYTES = 256 * 1024;
const SEQUENCE_HEADER = 'shoal-sequence';

export class KafkaCheckpointStore {
  private readonly producer: Producer;
  private readonly admin: Admin;
  private readonly chunkBytes: number;
  /** The manifest each scope's next save follows (read on first use). */
  private readonly manifests = new Map<string, Manifest | null>();

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
            configEntries: [{ name: 'cleanup.policy', value: 'compact' }],
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
   */
  async latest(
    scopes: readonly string[],
  ): Promise<Map<string, StoredCheckpoint & { readonly checkpoint: RunCheckpoint }>> {
    const records = await this.scan();
    const out = new Map<string, StoredCheckpoint & { readonly checkpoint: RunCheckpoint }>();
    for (const scope of scopes) {
      const raw = records.get(this.key(scope, 'manifest'));
      if (raw === undefined || raw.value === null) {
        this.manifests.set(scope, null);
        continue;
      }
      const manifest = JSON.parse(raw.value.toString('utf8')) as Manifest;
      this.manifests.set(scope, manifest);
      const where = this.where(scope, manifest.sequence);
      const parts: Buffer[] = [];
      for (let i = 0; i < manifest.chunks; i++) {
        const chunk = records.get(this.key(scope, 'chunk', manifest.slot, i));
        if (chunk === undefined || chunk.value === null || chunk.sequence !== String(manifest.sequence)) {
          throw new ShoalError(
            'invalid-snapshot',
            `checkpoint ${where}: chunk ${i + 1} of ${manifest.chunks} is ${chunk === undefined ? 'missing' : `of save ${chunk.sequence}`}`,
          );
        }
        parts.push(chunk.value);
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

  /** The newest value of every key on the topic, read from its start to the end it has now. */
  private async scan(): Promise<Map<string, { value: Buffer | null; sequence: string | undefined }>> {
    const topic = this.options.topic;
    const ends = await this.admin.fetchTopicOffsets(topic);
    const records = new Map<string, { value: Buffer | null; sequence: string | undefined }>();
    const left = new Map(
      ends.filter((e) => BigInt(e.high) > BigInt(e.low)).map((e) => [e.partition, BigInt(e.high)]),
    );
    if (left.size === 0) return records;
    const groupId = `${this.options.pipeline}-checkpoint-reader-${process.pid}-${Date.now().toString(36)}`;
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
              for (const m of batch.messages) {
                if (m.key === null) continue;
                const sequence = m.headers?.[SEQUENCE_HEADER];
                records.set(m.key.toString('utf8'), {
                  value: m.value,
                  sequence: sequence === undefined ? undefined : String(sequence),
                });
              }
            },
          })
          .catch(fail);
      });
    } finally {
      await consumer.disconnect();
      await this.admin.deleteGroups([groupId]).catch(() => undefined);
    }
    return records;
  }

  private key(scope: string, ...rest: (string | number)[]): string {
    return JSON.stringify(['shoal-checkpoint', this.options.pipeline, scope, ...rest]);
  }

  private where(scope: string, sequence: number): string {
    return `kafka:${this.options.topic} ${this.options.pipeline} ${scope} #${sequence}`;
  }
}
