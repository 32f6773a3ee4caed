import type { Kafka, Producer, TopicMessages, Transaction } from 'kafkajs';
import type { Logger } from 'pino';
import { persist } from './backoff.js';
import { kafkajsModule } from './kafkajs.js';

/**
 * The service's producer: every output of a fetched batch (scores, dead letters, journal records) goes
 * out in one `sendBatch`, acknowledged by all in-sync replicas, before the batch's offsets are committed.
 * kafkajs gives up on a send while the broker is away (a refused connection is not retried for long),
 * so `deliver` retries with capped exponential backoff until it is acknowledged or the service stops;
 * `waiting` is called on every failed attempt (the consumer pauses fetching and keeps its group
 * membership with a heartbeat meanwhile).
 */
export class OutputProducer {
  private readonly producer: Producer;
  private stopped = false;
  /** With exactly-once delivery: the transaction outputs go into until the next checkpoint commits it. */
  private transaction: Transaction | null = null;

  constructor(
    kafka: Kafka,
    private readonly log: Logger,
    /** Set for exactly-once delivery: outputs, checkpoints and offsets then commit together. */
    private readonly transactionalId: string | null = null,
    /** How long a transaction may stay open before the broker aborts it (ms; the checkpoint cadence). */
    transactionTimeoutMs = 60_000,
  ) {
    // Not idempotent by default: `deliver` re-sends a failed request itself, so a repeat after a failure
    // is possible either way (at-least-once; scores carry id and epoch so that consumers can drop
    // repeats). A transactional producer is idempotent, as Kafka requires.
    this.producer = kafka.producer({
      createPartitioner: kafkajsModule().Partitioners.DefaultPartitioner,
      allowAutoTopicCreation: false,
      ...(transactionalId === null
        ? {}
        : {
            transactionalId,
            idempotent: true,
            maxInFlightRequests: 1,
            transactionTimeout: transactionTimeoutMs,
          }),
    });
  }

  /**
   * Connect, retrying while the broker cannot be reached (kafkajs does not retry a refused connection).
   * A transactional producer's connection fences any older producer with its id (a killed instance) and
   * aborts the transaction that one left open.
   */
  async connect(): Promise<void> {
    await persist('connect the producer', () => this.producer.connect(), {
      log: this.log,
      stopped: () => this.stopped,
    });
  }

  /**
   * Commit the open transaction (exactly-once): with `more` (the checkpoint's records) and, when given,
   * the group's next offsets of `topic/partition` streams. Throws when the transaction fails: what it held
   * is then as if it never happened, and the last committed checkpoint is where to go on from.
   */
  async commit(
    more: readonly TopicMessages[],
    group: string,
    offsets: ReadonlyMap<string, bigint> | null,
  ): Promise<void> {
    const transaction = await this.open();
    for (const request of requests(more)) await transaction.sendBatch({ topicMessages: request, acks: -1 });
    if (offsets !== null && offsets.size > 0) {
      const topics = new Map<string, { partition: number; offset: string }[]>();
      for (const [stream, next] of offsets) {
        const at = stream.lastIndexOf('/');
        const topic = stream.slice(0, at);
        topics.set(topic, [
          ...(topics.get(topic) ?? []),
          { partition: Number(stream.slice(at + 1)), offset: next.toString() },
        ]);
      }
      await transaction.sendOffsets({
        consumerGroupId: group,
        topics: [...topics].map(([topic, partitions]) => ({ topic, partitions })),
      });
    }
    await transaction.commit();
    this.transaction = null;
  }

  private async open(): Promise<Transaction> {
    if (this.transaction === null) this.transaction = await this.producer.transaction();
    return this.transaction;
  }

  /**
   * Send, retrying until acknowledged; false only when the service stopped before it was. Requests are
   * cut at `REQUEST_BYTES` of values: kafkajs puts a request's messages for one partition in one record
   * batch, and the broker refuses a batch above its `message.max.bytes` (1 MiB by default).
   */
  async deliver(
    topicMessages: TopicMessages[],
    waiting: (attempt: number) => Promise<void>,
  ): Promise<boolean> {
    if (this.transactionalId !== null) {
      // Into the open transaction, unseen by read_committed consumers until the next checkpoint commits.
      const transaction = await this.open();
      for (const request of requests(topicMessages)) {
        await transaction.sendBatch({ topicMessages: request, acks: -1 });
      }
      return true;
    }
    for (const request of requests(topicMessages)) {
      if (!(await this.send(request, waiting))) return false;
    }
    return true;
  }

  private send(pending: TopicMessages[], waiting: (attempt: number) => Promise<void>): Promise<boolean> {
    return persist(
      'deliver outputs',
      async () => {
        await this.producer.sendBatch({ topicMessages: pending, acks: -1 });
      },
      { log: this.log, stopped: () => this.stopped, waiting },
    );
  }

  /** Give up on retries in progress (a shutdown past its deadline) and disconnect. */
  async stop(): Promise<void> {
    this.stopped = true;
    await this.producer.disconnect();
  }
}

/** Values per produce request, well under the broker's default `message.max.bytes` (1 MiB). */
const REQUEST_BYTES = 512 * 1024;

/** The messages in requests of at most `REQUEST_BYTES` of values (a larger single message goes alone). */
function requests(topicMessages: readonly TopicMessages[]): TopicMessages[][] {
  const out: TopicMessages[][] = [];
  let current: TopicMessages[] = [];
  let bytes = 0;
  for (const { topic, messages } of topicMessages) {
    for (const m of messages) {
      const size = m.value === null ? 0 : Buffer.byteLength(m.value);
      if (bytes > 0 && bytes + size > REQUEST_BYTES) {
        out.push(current);
        current = [];
        bytes = 0;
      }
      const last = current[current.length - 1];
      if (last !== undefined && last.topic === topic) last.messages.push(m);
      else current.push({ topic, messages: [m] });
      bytes += size;
    }
  }
  if (current.length > 0) out.push(current);
  return out;
}
