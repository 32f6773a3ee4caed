import type { Admin, Consumer, EachBatchPayload, Kafka } from 'kafkajs';
import type { Logger } from 'pino';
import type { KafkaSettings } from './config.js';
import type { RawMessage } from './decode.js';

/**
 * The events consumer: a consumer group on the events topics, one kafkajs batch (the messages of one
 * topic-partition) handed to `handle` at a time. Offsets are committed explicitly (`autoCommit: false`)
 * and only after `handle` resolved true — that is, after the batch's outputs were acknowledged — so a
 * crash can repeat outputs but never lose an event (at-least-once). While outputs cannot be delivered the
 * topic is paused (no more fetching) and the group membership kept alive with heartbeats.
 *
 * A crash kafkajs will not restart from (a non-retriable error) ends `finished` with a message; the
 * service exits non-zero rather than stay up as a member that consumes nothing.
 */

/** What the handler gets besides the messages. */
export interface BatchControl {
  /** Keep the group membership while waiting (for example for the broker to come back). */
  heartbeat(): Promise<void>;
  /** Stop fetching the batch's topic until `resume()`. */
  pause(): void;
  resume(): void;
}

export interface FetchedBatch {
  readonly topic: string;
  readonly partition: number;
  readonly messages: readonly RawMessage[];
  /** Messages left on the partition after this batch: its high watermark minus the next offset to read. */
  readonly lag: number;
}

/** Handle one batch; resolve true once its outputs are acknowledged (then its offsets are committed). */
export type BatchHandler = (batch: FetchedBatch, control: BatchControl) => Promise<boolean>;

export interface Assignment {
  /** `topic/partition` names this instance now reads. */
  readonly streams: readonly string[];
  readonly isLeader: boolean;
  readonly memberId: string;
}

export class EventConsumer {
  private readonly consumer: Consumer;
  private readonly admin: Admin;
  private finish: (outcome: ConsumerOutcome) => void = () => {};
  private stopping: Promise<void> | null = null;
  /** How the consumer ended: stopped on request, or crashed with a message. */
  readonly finished: Promise<ConsumerOutcome>;

  constructor(
    kafka: Kafka,
    private readonly settings: KafkaSettings,
    private readonly log: Logger,
    private readonly onAssign: (assignment: Assignment) => Promise<void>,
    /** Told true when the consumer has joined its group, false on a rebalance, a crash or a stop. */
    private readonly onMembership: (joined: boolean) => void = () => {},
  ) {
    this.consumer = kafka.consumer({
      groupId: settings.group,
      maxWaitTimeInMs: settings.maxWaitMs,
      sessionTimeout: settings.sessionTimeoutMs,
      heartbeatInterval: Math.max(100, Math.floor(settings.sessionTimeoutMs / 5)),
      maxBytesPerPartition: Math.max(1024 * 1024, settings.events.maxMessageBytes),
      allowAutoTopicCreation: false,
      // kafkajs restarts the consumer after any failure by default: a batch it cannot decode (a corrupt
      // one, or a codec with no decoder registered) would then be fetched and refused forever. Restart only after a transient failure (a
      // broker away for longer than the retries ends in a retriable cause), and stop on anything else.
      retry: { restartOnFailure: async (e: Error) => transient(e) },
    });
    this.admin = kafka.admin();
    this.finished = new Promise((done) => {
      this.finish = done;
    });
    const { CRASH, GROUP_JOIN, REBALANCING, STOP } = this.consumer.events;
    this.consumer.on(REBALANCING, () => this.onMembership(false));
    this.consumer.on(STOP, () => this.onMembership(false));
    this.consumer.on(CRASH, ({ payload }) => {
      this.onMembership(false);
      if (payload.restart) {
        this.log.debug({ error: payload.error.message }, 'consumer restarting after a retriable error');
        return;
      }
      this.finish({ crashed: true, message: `the consumer stopped: ${payload.error.message}` });
    });
    this.consumer.on(GROUP_JOIN, ({ payload }) => {
      const streams = Object.entries(payload.memberAssignment).flatMap(([topic, parts]) =>
        parts.map((p) => `${topic}/${p}`),
      );
      this.log.info({ streams, leader: payload.isLeader }, 'joined the group');
      this.onMembership(true);
      this.onAssign({ streams, isLeader: payload.isLeader, memberId: payload.memberId }).catch((e: Error) =>
        this.finish({ crashed: true, message: e.message }),
      );
    });
  }

  /** Members of the group now (for the check that a `global` scope instance is alone). */
  async members(): Promise<number> {
    const { groups } = await this.admin.describeGroups([this.settings.group]);
    return groups[0]?.members.length ?? 0;
  }

  /**
   * The lag of `topic/partition` streams as the brokers see it: the high watermark minus the group's
   * committed offset (or, with none committed, where the group would start). Used on assignment, before
   * any batch of a partition arrives; after that each batch carries its own.
   */
  async lag(streams: readonly string[]): Promise<{ topic: string; partition: number; lag: number }[]> {
    const out: { topic: string; partition: number; lag: number }[] = [];
    const topics = new Map<string, number[]>();
    for (const stream of streams) {
      const at = stream.lastIndexOf('/');
      const topic = stream.slice(0, at);
      topics.set(topic, [...(topics.get(topic) ?? []), Number(stream.slice(at + 1))]);
    }
    for (const [topic, partitions] of topics) {
      const ends = await this.admin.fetchTopicOffsets(topic);
      const [committed] = await this.admin.fetchOffsets({ groupId: this.settings.group, topics: [topic] });
      for (const partition of partitions) {
        const end = ends.find((e) => e.partition === partition);
        if (end === undefined) continue;
        const done = committed?.partitions.find((c) => c.partition === partition)?.offset ?? '-1';
        const start = this.settings.events.fromBeginning ? end.low : end.high;
        const next = BigInt(done === '-1' ? start : done);
        out.push({ topic, partition, lag: Math.max(0, Number(BigInt(end.high) - next)) });
      }
    }
    return out;
  }

  /** Connect (before `members()` or `start()`). */
  async connect(): Promise<void> {
    await this.admin.connect();
    await this.consumer.connect();
  }

  async start(handle: BatchHandler): Promise<void> {
    await this.consumer.subscribe({
      topics: [
        ...this.settings.events.topics,
        ...(this.settings.labels === null ? [] : [this.settings.labels.topic]),
      ],
      fromBeginning: this.settings.events.fromBeginning,
    });
    await this.consumer.run({
      autoCommit: false,
      eachBatchAutoResolve: false,
      eachBatch: (payload) => this.batch(payload, handle),
    });
  }

  private async batch(payload: EachBatchPayload, handle: BatchHandler): Promise<void> {
    const { batch } = payload;
    if (batch.messages.length === 0 || payload.isStale()) return;
    const topic = batch.topic;
    const partition = batch.partition;
    let resume: (() => void) | null = null;
    const last = batch.lastOffset();
    const lag = Number(BigInt(batch.highWatermark) - BigInt(last) - 1n);
    const delivered = await handle(
      { topic, partition, messages: batch.messages as RawMessage[], lag: Math.max(0, lag) },
      {
        heartbeat: () => payload.heartbeat(),
        pause: () => {
          if (resume === null) resume = payload.pause();
        },
        resume: () => {
          resume?.();
          resume = null;
        },
      },
    );
    if (!delivered) return;
    payload.resolveOffset(last);
    await this.consumer.commitOffsets([{ topic, partition, offset: (BigInt(last) + 1n).toString() }]);
  }

  /** Stop fetching, let the batch in flight finish (and commit), leave the group. */
  async stop(): Promise<void> {
    if (this.stopping !== null) return this.stopping;
    this.stopping = this.leave();
    return this.stopping;
  }

  private async leave(): Promise<void> {
    await this.consumer.stop();
    await this.consumer.disconnect();
    await this.admin.disconnect();
    this.finish({ crashed: false, message: 'stopped' });
  }
}

export interface ConsumerOutcome {
  readonly crashed: boolean;
  readonly message: string;
}

/** Whether kafkajs marks the error (or, after its retries ran out, the error they ended on) retriable. */
function transient(e: Error): boolean {
  const { retriable, cause } = e as { retriable?: boolean; cause?: unknown };
  if (retriable === true) return true;
  return e.name === 'KafkaJSNumberOfRetriesExceeded' && cause instanceof Error && transient(cause);
}
