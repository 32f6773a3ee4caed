import kafkajs, { type Kafka, type Producer, type TopicMessages } from 'kafkajs';
import type { Logger } from 'pino';
import { persist } from './backoff.js';

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

  constructor(
    kafka: Kafka,
    private readonly log: Logger,
  ) {
    // Not idempotent: `deliver` re-sends a failed request itself, so a repeat after a failure is possible
    // either way (at-least-once; scores carry id and epoch so that consumers can drop repeats).
    this.producer = kafka.producer({
      createPartitioner: kafkajs.Partitioners.DefaultPartitioner,
      allowAutoTopicCreation: false,
    });
  }

  /** Connect, retrying while the broker cannot be reached (kafkajs does not retry a refused connection). */
  async connect(): Promise<void> {
    await persist('connect the producer', () => this.producer.connect(), {
      log: this.log,
      stopped: () => this.stopped,
    });
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
