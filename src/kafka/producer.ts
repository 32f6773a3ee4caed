import kafkajs, { type Kafka, type Producer, type TopicMessages } from 'kafkajs';
import type { Logger } from 'pino';

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

  connect(): Promise<void> {
    return this.producer.connect();
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

  private async send(
    pending: TopicMessages[],
    waiting: (attempt: number) => Promise<void>,
  ): Promise<boolean> {
    for (let attempt = 1; ; attempt++) {
      try {
        await this.producer.sendBatch({ topicMessages: pending, acks: -1 });
        if (attempt > 1) this.log.info({ attempts: attempt }, 'outputs delivered after retries');
        return true;
      } catch (e) {
        if (this.stopped) return false;
        const delay = Math.min(5_000, 100 * 2 ** Math.min(attempt, 6));
        this.log[attempt === 1 ? 'warn' : 'debug'](
          { attempt, retryInMs: delay, error: (e as Error).message },
          'cannot deliver outputs; retrying',
        );
        await waiting(attempt);
        await new Promise((done) => setTimeout(done, delay));
        if (this.stopped) return false;
      }
    }
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
