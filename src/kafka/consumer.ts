import type { Admin, Consumer, ConsumerRunConfig, EachBatchPayload, Kafka } from 'kafkajs';
import type { Logger } from 'pino';
import { samePartitionAssigner } from './assigner.js';
import { backoffMs, persist } from './backoff.js';
import type { KafkaSettings } from './config.js';
import type { RawMessage } from './decode.js';

/**
 * The events consumer: a consumer group on the events topics, one kafkajs batch (the messages of one
 * topic-partition) handed to `handle` at a time. A batch's outputs go out while the next batch is
 * fetched and handled: once `handle` has handled a batch, kafkajs fetches on, and the batch's offsets
 * are committed explicitly (`autoCommit: false`) only after its outputs were acknowledged — so a crash
 * can repeat outputs but never lose an event (at-least-once). One batch at most is in flight: the next
 * one is not given back to kafkajs before it is committed (and a failure of it fails that one too).
 * While outputs cannot be delivered the topic is paused (no more fetching) and the group membership
 * kept alive with heartbeats.
 *
 * A crash that `restartsAfter` calls transient (a broker away, however kafkajs wraps it) restarts the
 * consumer — kafkajs's own restart, or the service's when kafkajs gave up; any other crash ends
 * `finished` with a message, and the service exits non-zero rather than stay up as a member that
 * consumes nothing.
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

/**
 * Handle one batch: resolve once it is handled, with `acknowledged`, which resolves true once its
 * outputs are acknowledged (then its offsets are committed); or with null when it was not handled (it is
 * read again). Outputs must be acknowledged in the order their batches were handled.
 */
export type BatchHandler = (
  batch: FetchedBatch,
  control: BatchControl,
) => Promise<{ readonly acknowledged: Promise<boolean> } | null>;

export interface Assignment {
  /** `topic/partition` names this instance now reads. */
  readonly streams: readonly string[];
  readonly isLeader: boolean;
  readonly memberId: string;
}

/**
 * What the service decides the moment it joins, before the first fetch: where each assigned partition
 * is read from (the sessions are the source of truth, so the group's committed offsets are overruled),
 * and which topics wait (the labels, until the events on the topic at that moment were read).
 */
export interface JoinPlan {
  /** The next offset to read of `topic/partition` streams; others start where the group committed. */
  readonly seek: ReadonlyMap<string, bigint>;
  /** Topics not fetched until `resume(topic)`, and `topic/partition` streams until `resume(stream)`. */
  readonly hold: readonly string[];
  readonly holdStreams: readonly string[];
}

export interface ConsumerOptions {
  /**
   * Told true when the consumer has joined its group, false on a rebalance, a crash, a stop — and when
   * no heartbeat has reached the group's coordinator for a session timeout (the broker is away: the
   * group has let the member go, even if kafkajs has not given up yet).
   */
  readonly onMembership?: (joined: boolean) => void;
  /** Called synchronously on each join, before any fetch of the new assignment. */
  readonly onJoin?: (streams: readonly string[]) => JoinPlan;
  /** Told when a rebalance begins (before partitions may move to another member). */
  readonly onRebalance?: () => void;
  /**
   * Commit each batch's offsets once its outputs are acknowledged (true, the default), or only through
   * `commit` (a checkpointing service commits what a checkpoint covers).
   */
  readonly commitEachBatch?: boolean;
}

export class EventConsumer {
  private readonly consumer: Consumer;
  private readonly admin: Admin;
  private finish: (outcome: ConsumerOutcome) => void = () => {};
  /** `topic/partition` streams of the last join. */
  private assigned: readonly string[] = [];
  private joined = false;
  /** When the last heartbeat was acknowledged (`performance.now()`), and the membership last told. */
  private beat = 0;
  private told: boolean | null = null;
  private watchdog: NodeJS.Timeout | null = null;
  private stopping: Promise<void> | null = null;
  /** The last batch handled, until its outputs are acknowledged and its offsets committed; and its join. */
  private inFlight: { readonly done: Promise<void>; readonly join: number } = {
    done: Promise.resolve(),
    join: 0,
  };
  /** Joins so far: a commit of an earlier one fails once the group has moved on, and is let go. */
  private joins = 0;
  /** How the consumer runs once started (null before), and its restarts since it last joined the group. */
  private running: ConsumerRunConfig | null = null;
  private reruns = 0;
  /** How the consumer ended: stopped on request, or crashed with a message. */
  readonly finished: Promise<ConsumerOutcome>;

  constructor(
    kafka: Kafka,
    private readonly settings: KafkaSettings,
    private readonly log: Logger,
    private readonly onAssign: (assignment: Assignment) => Promise<void>,
    private readonly options: ConsumerOptions = {},
  ) {
    this.consumer = kafka.consumer({
      groupId: settings.group,
      // Partition p of the events and of the labels topic go to one instance (scope partition's labels).
      partitionAssigners: [samePartitionAssigner],
      maxWaitTimeInMs: settings.maxWaitMs,
      sessionTimeout: settings.sessionTimeoutMs,
      heartbeatInterval: Math.max(100, Math.floor(settings.sessionTimeoutMs / 5)),
      maxBytesPerPartition: Math.max(1024 * 1024, settings.events.maxMessageBytes),
      allowAutoTopicCreation: false,
      // kafkajs restarts the consumer after any failure by default: a batch it cannot decode (a corrupt
      // one, or a codec with no decoder registered) would then be fetched and refused forever. Restart
      // only after a transient failure (`restartsAfter`), and stop on anything else.
      retry: { restartOnFailure: async (e: Error) => restartsAfter(e) },
    });
    this.admin = kafka.admin();
    this.finished = new Promise((done) => {
      this.finish = done;
    });
    const { CRASH, GROUP_JOIN, HEARTBEAT, REBALANCING, STOP } = this.consumer.events;
    this.consumer.on(HEARTBEAT, () => {
      this.beat = performance.now();
      this.report();
    });
    this.consumer.on(REBALANCING, () => {
      this.onMembership(false);
      this.options.onRebalance?.();
    });
    this.consumer.on(STOP, () => this.onMembership(false));
    this.consumer.on(CRASH, ({ payload }) => {
      this.onMembership(false);
      if (payload.restart) {
        this.log.debug({ error: payload.error.message }, 'consumer restarting after a retriable error');
        return;
      }
      // kafkajs asks `restartOnFailure` only about errors it deems retriable, and has disconnected the
      // consumer by now: a broker away long enough ends in errors it does not (no group coordinator
      // found), so those restarts are the service's own.
      if (this.stopping === null && this.running !== null && restartsAfter(payload.error)) {
        this.log.warn(
          { error: payload.error.message },
          'the consumer stopped while the broker is away; starting it again',
        );
        void this.rerun(this.running);
        return;
      }
      this.finish({ crashed: true, message: `the consumer stopped: ${payload.error.message}` });
    });
    this.consumer.on(GROUP_JOIN, ({ payload }) => {
      this.reruns = 0;
      const streams = Object.entries(payload.memberAssignment).flatMap(([topic, parts]) =>
        parts.map((p) => `${topic}/${p}`),
      );
      this.log.info({ streams, leader: payload.isLeader }, 'joined the group');
      this.joins++;
      this.assigned = streams;
      if (this.options.onJoin !== undefined) this.plan(this.options.onJoin(streams));
      this.onMembership(true);
      this.onAssign({ streams, isLeader: payload.isLeader, memberId: payload.memberId }).catch((e: Error) =>
        this.finish({ crashed: true, message: e.message }),
      );
    });
  }

  private onMembership(joined: boolean): void {
    this.joined = joined;
    if (joined) this.beat = performance.now();
    this.report();
  }

  /** Tell the membership as it stands: joined, and heard from the coordinator within a session. */
  private report(): void {
    const member = this.joined && performance.now() - this.beat <= this.settings.sessionTimeoutMs;
    if (member === this.told) return;
    this.told = member;
    this.options.onMembership?.(member);
  }

  /** Seek and hold as the plan says; kafkajs applies seeks before its next fetch of each partition. */
  private plan(plan: JoinPlan): void {
    for (const [stream, offset] of plan.seek) this.seek(stream, offset);
    for (const topic of plan.hold) this.consumer.pause([{ topic }]);
    for (const stream of plan.holdStreams) {
      const { topic, partition } = splitStream(stream);
      this.consumer.pause([{ topic, partitions: [partition] }]);
    }
  }

  /** Read `topic/partition` from `offset` next (kafkajs applies it before its next fetch of it). */
  seek(stream: string, offset: bigint): void {
    const { topic, partition } = splitStream(stream);
    this.log.debug({ stream, offset: offset.toString() }, 'reading from the checkpointed offset');
    this.consumer.seek({ topic, partition, offset: offset.toString() });
  }

  /** Fetch a topic, or a `topic/partition` stream, held by the join plan again. */
  resume(held: string): void {
    if (!held.includes('/')) {
      this.consumer.resume([{ topic: held }]);
      return;
    }
    const { topic, partition } = splitStream(held);
    this.consumer.resume([{ topic, partitions: [partition] }]);
  }

  /**
   * Commit these next offsets to the group (those of streams this member still holds): what a
   * checkpoint covers. False when the commit failed (a rebalance took the partitions, the broker is
   * away); the checkpoint stays the source of truth either way.
   */
  async commit(offsets: ReadonlyMap<string, bigint>): Promise<boolean> {
    const held = [...offsets].filter(([stream]) => this.assigned.includes(stream));
    if (held.length === 0) return true;
    try {
      await this.consumer.commitOffsets(
        held.map(([stream, offset]) => ({ ...splitStream(stream), offset: offset.toString() })),
      );
      return true;
    } catch (e) {
      this.log.debug({ error: (e as Error).message }, 'could not commit the checkpointed offsets');
      return false;
    }
  }

  /** The high watermark (next offset to be written) of each `topic/partition` stream. */
  async ends(streams: readonly string[]): Promise<Map<string, bigint>> {
    const out = new Map<string, bigint>();
    for (const [topic, partitions] of byTopic(streams)) {
      for (const end of await this.admin.fetchTopicOffsets(topic)) {
        if (partitions.includes(end.partition)) out.set(`${topic}/${end.partition}`, BigInt(end.high));
      }
    }
    return out;
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
    for (const [topic, partitions] of byTopic(streams)) {
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

  /** The partition count of each topic (for the check that labels are co-partitioned with events). */
  async partitionCounts(topics: readonly string[]): Promise<Map<string, number>> {
    const { topics: found } = await this.admin.fetchTopicMetadata({ topics: [...topics] });
    return new Map(found.map((t) => [t.name, t.partitions.length]));
  }

  /** Connect (before `members()` or `start()`), retrying while the broker cannot be reached. */
  async connect(): Promise<void> {
    const options = { log: this.log, stopped: () => this.stopping !== null };
    await persist('connect the admin client', () => this.admin.connect(), options);
    await persist('connect the consumer', () => this.consumer.connect(), options);
  }

  async start(handle: BatchHandler): Promise<void> {
    this.watchdog = setInterval(() => this.report(), 500);
    this.watchdog.unref();
    await this.consumer.subscribe({
      topics: [
        ...this.settings.events.topics,
        ...(this.settings.labels === null ? [] : [this.settings.labels.topic]),
      ],
      fromBeginning: this.settings.events.fromBeginning,
    });
    this.running = {
      autoCommit: false,
      eachBatchAutoResolve: false,
      eachBatch: (payload) => this.batch(payload, handle),
    };
    await this.consumer.run(this.running);
  }

  /** Connect and run the consumer again after a crash, once a backoff has passed, until it connects. */
  private async rerun(config: ConsumerRunConfig): Promise<void> {
    await new Promise((done) => setTimeout(done, backoffMs(++this.reruns)));
    await persist(
      'start the consumer again',
      async () => {
        await this.consumer.connect();
        await this.consumer.run(config);
      },
      { log: this.log, stopped: () => this.stopping !== null },
    );
  }

  private async batch(payload: EachBatchPayload, handle: BatchHandler): Promise<void> {
    const { batch } = payload;
    if (batch.messages.length === 0 || payload.isStale()) return;
    const topic = batch.topic;
    const partition = batch.partition;
    let resume: (() => void) | null = null;
    const last = batch.lastOffset();
    const lag = Number(BigInt(batch.highWatermark) - BigInt(last) - 1n);
    const handled = await handle(
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
    const previous = this.inFlight;
    if (handled !== null) {
      // kafkajs fetches on from the next offset; the group's offset moves once the outputs are acknowledged.
      payload.resolveOffset(last);
      const done = (async () => {
        await this.settled(previous);
        if (!(await handled.acknowledged) || this.options.commitEachBatch === false) return;
        await this.consumer.commitOffsets([{ topic, partition, offset: (BigInt(last) + 1n).toString() }]);
      })();
      // Awaited by the next batch or on stop; never an unhandled rejection meanwhile.
      done.catch(() => undefined);
      this.inFlight = { done, join: this.joins };
    }
    await this.settled(previous);
  }

  /**
   * Wait for a batch in flight: its failure is this batch's (kafkajs then restarts from the committed
   * offsets), unless the group was joined again since — its commit then belongs to a generation that is
   * gone, and whoever reads its partition now reads the batch again.
   */
  private async settled(batch: { readonly done: Promise<void>; readonly join: number }): Promise<void> {
    try {
      await batch.done;
    } catch (e) {
      if (batch.join === this.joins) throw e;
      this.log.debug({ error: (e as Error).message }, 'a batch of an earlier join was not committed');
    }
  }

  /** Stop fetching, let the batches in flight finish (outputs acknowledged, offsets committed), leave. */
  async stop(): Promise<void> {
    if (this.stopping !== null) return this.stopping;
    this.stopping = this.leave();
    return this.stopping;
  }

  private async leave(): Promise<void> {
    if (this.watchdog !== null) clearInterval(this.watchdog);
    await this.consumer.stop();
    await this.settled(this.inFlight).catch((e: Error) =>
      this.log.warn({ error: e.message }, 'the last batch was not committed; it is read again on restart'),
    );
    await this.consumer.disconnect();
    await this.admin.disconnect();
    this.finish({ crashed: false, message: 'stopped' });
  }
}

export interface ConsumerOutcome {
  readonly crashed: boolean;
  readonly message: string;
}

/**
 * Whether the consumer starts again after a crash (kafkajs's own restart, or the service's when kafkajs
 * gave up): some error on its chain of causes is retriable, a lost connection or a coordinator that
 * cannot be found (kafkajs wraps a refused connection, and a group coordinator it found no broker to ask
 * for, in errors it marks non-retriable once its own retries ran out: both mean the broker is away), and
 * none says a codec is missing (that batch would fail again forever).
 */
export function restartsAfter(e: Error): boolean {
  const chain: Error[] = [];
  for (
    let at: unknown = e;
    at instanceof Error && chain.length < 16;
    at = (at as { cause?: unknown }).cause
  ) {
    chain.push(at);
  }
  if (chain.some((x) => x.name === 'KafkaJSNotImplemented')) return false;
  return chain.some(
    (x) =>
      (x as { retriable?: boolean }).retriable === true ||
      /Connection|NoBrokerAvailable|BrokerNotFound|GroupCoordinatorNotFound/.test(x.name) ||
      /connection|ECONNREFUSED|ECONNRESET|ETIMEDOUT|not connected/i.test(x.message),
  );
}

/** `topic/partition` → its parts (topic names may not hold `/`, but split at the last one anyway). */
function splitStream(stream: string): { topic: string; partition: number } {
  const at = stream.lastIndexOf('/');
  return { topic: stream.slice(0, at), partition: Number(stream.slice(at + 1)) };
}

/** Streams grouped by topic: topic → partitions. */
function byTopic(streams: readonly string[]): Map<string, number[]> {
  const topics = new Map<string, number[]>();
  for (const stream of streams) {
    const { topic, partition } = splitStream(stream);
    topics.set(topic, [...(topics.get(topic) ?? []), partition]);
  }
  return topics;
}
