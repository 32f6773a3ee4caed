import type { WriteStream } from 'node:fs';
import {
  encodeScores,
  FrameDecoder,
  type FrameDecoderSnapshot,
  type FrameOptions,
  SCORES_CONTENT_TYPE,
} from '../frames/index.js';
import type { JournalRecord } from '../journal/index.js';
import {
  BatchDecoder,
  type DeadLetter,
  deadLetterMessage,
  type FetchedBatch,
  journalMessage,
  type KafkaSettings,
  type OutputMessage,
  scoresMessage,
  type TopicOutputs,
} from '../kafka/index.js';
import { ShardPool } from '../parallel/index.js';
import { LearningSession, liveClock, type RunConfig, type SessionSnapshot } from '../pipeline/index.js';
import { ServeTelemetry, SessionTelemetry } from '../telemetry/index.js';
import { threadsFrom } from './threads.js';

/** Rows per scores message: about 60 bytes a row (two classes), far below the broker's 1 MiB limit. */
const SCORE_ROWS_PER_MESSAGE = 4096;

/**
 * The running service's model side: for each fetched batch, decode it (bad messages become dead letters)
 * and run it through the same `LearningSession` `replay` uses — events are scored (inline labels judged
 * and trained on at once, other rows leave a pending prediction), late labels from the labels topic are
 * joined by id to the prediction served — then turn the scores, dead letters and journal records into the
 * output messages of that batch. One session per scope key: `global`, or one per `topic/partition`.
 */
export class ServeModels {
  /** What the telemetry endpoint reads: every session's metrics, dead letters and lag. */
  readonly telemetry = new ServeTelemetry();
  private readonly states = new Map<string, ScopeState>();
  /** Each session's telemetry, told when a checkpoint of it is written; null without checkpoints. */
  private readonly checkpointed: Map<string, SessionTelemetry> | null;
  /**
   * The worker threads of sessions on threads (`ensemble.threads` > 1): a session dropped on a
   * rebalance gives its threads back, and the next one taken up from a checkpoint runs on them warm.
   */
  private readonly pool = new ShardPool();

  constructor(
    private readonly config: RunConfig,
    private readonly settings: KafkaSettings,
    private readonly frameOptions: FrameOptions,
    private readonly version: string,
    private readonly journalFile: WriteStream | null,
    checkpoints: boolean,
  ) {
    this.checkpointed = checkpoints ? new Map() : null;
  }

  /** A checkpoint of `key` was written now (telemetry's checkpoint age). */
  saved(key: string): void {
    this.checkpointed?.get(key)?.checkpointed();
  }

  /** The output messages for one batch (its scores, dead letters and journal records). */
  async handle(
    batch: FetchedBatch,
  ): Promise<{ outputs: TopicOutputs[]; scored: number; rows: number; dead: DeadLetter[] }> {
    const key = this.key(`${batch.topic}/${batch.partition}`);
    const state = this.state(key);
    const dead: DeadLetter[] = [];
    const scores: OutputMessage[] = [];
    let scored = 0;
    let rows = 0;
    if (batch.topic === this.settings.labels?.topic) {
      const labels = this.labels(state).decode(batch.topic, batch.partition, batch.messages, dead);
      if (labels !== null) {
        await state.session.learnAsync(labels.frame, state.decoder.classes);
        rows = labels.frame.rows;
      }
    } else {
      const events = state.events.decode(batch.topic, batch.partition, batch.messages, dead);
      if (events !== null) {
        const out = await state.session.scoreAsync(events.frame, state.decoder.classes);
        for (let from = 0; from < out.rows; from += SCORE_ROWS_PER_MESSAGE) {
          const ipc = encodeScores(
            out,
            events.eventTimes,
            from,
            Math.min(out.rows, from + SCORE_ROWS_PER_MESSAGE),
          );
          scores.push(scoresMessage(events.stream, ipc, SCORES_CONTENT_TYPE));
        }
        scored = out.rows;
        rows = out.rows;
      }
    }
    // Every handled message moves its stream on, dead letters too: the session's positions are the
    // offsets a checkpoint of it covers.
    const last = batch.messages[batch.messages.length - 1];
    if (last !== undefined)
      state.session.advance(`${batch.topic}/${batch.partition}`, BigInt(last.offset) + 1n);
    if (dead.length > 0) state.session.reject(dead.length);
    for (const d of dead) this.telemetry.deadLettered(d.code);
    return { outputs: this.outputs(key, state, scores, dead), scored, rows, dead };
  }

  /** Whether a `topic/partition` stream is one of the labels topic. */
  isLabels(stream: string): boolean {
    const topic = this.settings.labels?.topic;
    return (
      topic !== undefined && stream.startsWith(`${topic}/`) && !stream.slice(topic.length + 1).includes('/')
    );
  }

  /**
   * The scope key of a `topic/partition` stream: `global`, or the events stream itself; with scope
   * `partition` labels partition p belongs to events partition p (the topics are co-partitioned).
   */
  key(stream: string): string {
    if (this.settings.scope === 'global') return 'global';
    if (!this.isLabels(stream)) return stream;
    return `${this.settings.events.topics[0]!}/${stream.slice(this.settings.labels!.topic.length + 1)}`;
  }

  /** The scope keys that hold a session now. */
  keys(): string[] {
    return [...this.states.keys()];
  }

  /** Where the session of `key` goes on reading each stream it read (empty when there is none). */
  positions(key: string): ReadonlyMap<string, bigint> {
    return this.states.get(key)?.session.resumePositions() ?? new Map();
  }

  /** What a checkpoint of `key` holds: the events decoder's state and the session's snapshot. */
  async parts(key: string): Promise<{ decoder: FrameDecoderSnapshot; session: SessionSnapshot } | null> {
    const state = this.states.get(key);
    if (state === undefined) return null;
    return { decoder: state.decoder.snapshot(), session: await state.session.snapshotAsync() };
  }

  /** Take up the session of `key` from a checkpoint's parts (before any batch of it is handled). */
  restore(key: string, parts: { decoder: FrameDecoderSnapshot; session: SessionSnapshot }): void {
    if (this.states.has(key)) throw new Error(`the session of ${key} is already running`);
    this.state(key, parts);
  }

  /** Drop the sessions of streams this instance no longer reads (`partition` scope). */
  keepOnly(streams: readonly string[]): string[] {
    if (this.settings.scope === 'global') return [];
    const dropped = [...this.states.keys()].filter((key) => !streams.includes(key));
    for (const key of dropped) {
      // Its worker threads, if any, stop in the background (they hold nothing the checkpoint needs).
      void this.states.get(key)!.session.close();
      this.states.delete(key);
      this.checkpointed?.delete(key);
      this.telemetry.drop(key);
    }
    return dropped;
  }

  /** Close every session (and its worker threads): the summary records to send before exit. */
  async finish(): Promise<TopicOutputs[]> {
    const out: TopicOutputs[] = [];
    for (const [key, state] of this.states) {
      if (state.session.scored > 0) state.session.finish(state.decoder.classes);
      await state.session.close();
      out.push(...this.outputs(key, state, [], []));
    }
    await this.pool.close();
    return out;
  }

  private outputs(
    key: string,
    state: ScopeState,
    scores: OutputMessage[],
    dead: DeadLetter[],
  ): TopicOutputs[] {
    const s = this.settings;
    const records = state.journal.splice(0);
    if (this.journalFile !== null) for (const r of records) this.journalFile.write(`${JSON.stringify(r)}\n`);
    const out: TopicOutputs[] = [
      { topic: s.scores.topic, messages: scores },
      { topic: s.deadLetters.topic, messages: dead.map(deadLetterMessage) },
    ];
    if (s.journal.topic !== null) {
      out.push({ topic: s.journal.topic, messages: records.map((r) => journalMessage(key, r)) });
    }
    return out.filter((t) => t.messages.length > 0);
  }

  /** The labels decoder shares the events decoder's class dictionary, so class codes agree. */
  private labels(state: ScopeState): BatchDecoder {
    if (state.labels === null) {
      const { id, label } = this.config.inputs;
      const decoder = state.decoder.labelsDecoder({ id: id!, label: label! }, 'kafka.labels');
      state.labels = new BatchDecoder(
        decoder,
        this.settings.events.format,
        this.settings.events.maxMessageBytes,
      );
    }
    return state.labels;
  }

  private state(
    key: string,
    restored: { decoder: FrameDecoderSnapshot; session: SessionSnapshot } | null = null,
  ): ScopeState {
    let state = this.states.get(key);
    if (state === undefined) {
      const decoder =
        restored === null
          ? new FrameDecoder(this.frameOptions, 'inputs')
          : FrameDecoder.restore(restored.decoder);
      const journal: JournalRecord[] = [];
      let telemetry: SessionTelemetry | null = null;
      const options = {
        source: `kafka:${this.settings.events.topics.join(',')}${key === 'global' ? '' : ` ${key}`}`,
        journal: {
          write: (r: JournalRecord) => {
            telemetry?.record(r);
            journal.push(r);
          },
          flush: async () => undefined,
        },
        clock: liveClock({ monotonic: () => performance.now(), wall: () => Date.now() }),
        version: this.version,
        workers: threadsFrom(this.pool),
        lateLabels: this.settings.labels !== null,
      };
      state = {
        decoder,
        events: new BatchDecoder(decoder, this.settings.events.format, this.settings.events.maxMessageBytes),
        labels: null,
        session:
          restored === null
            ? new LearningSession({ config: this.config, ...options })
            : LearningSession.restore(restored.session, { ...options, threads: this.config.threads }),
        journal,
      };
      telemetry = SessionTelemetry.of(state.session, {
        checkpoints: this.checkpointed !== null,
        wall: () => Date.now(),
      });
      this.checkpointed?.set(key, telemetry);
      this.telemetry.add(key, telemetry);
      this.states.set(key, state);
    }
    return state;
  }
}

interface ScopeState {
  readonly decoder: FrameDecoder;
  readonly events: BatchDecoder;
  labels: BatchDecoder | null;
  readonly session: LearningSession;
  /** Journal records of the batch being handled (sent with its outputs). */
  readonly journal: JournalRecord[];
}
