import type { WriteStream } from 'node:fs';
import { configFingerprint, type RunCheckpoint, runCheckpoint } from '../checkpoint/index.js';
import { encodeScores, FrameDecoder, type FrameOptions, SCORES_CONTENT_TYPE } from '../frames/index.js';
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
import { LearningSession, liveClock, type RunConfig } from '../pipeline/index.js';
import { ServeTelemetry, SessionTelemetry } from '../telemetry/index.js';

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

  constructor(
    private readonly config: RunConfig,
    private readonly settings: KafkaSettings,
    private readonly frameOptions: FrameOptions,
    private readonly version: string,
    private readonly journalFile: WriteStream | null,
  ) {}

  /** The output messages for one batch (its scores, dead letters and journal records). */
  handle(batch: FetchedBatch): { outputs: TopicOutputs[]; scored: number; dead: DeadLetter[] } {
    const key = this.settings.scope === 'global' ? 'global' : `${batch.topic}/${batch.partition}`;
    const state = this.state(key);
    const dead: DeadLetter[] = [];
    const scores: OutputMessage[] = [];
    let scored = 0;
    if (batch.topic === this.settings.labels?.topic) {
      const labels = this.labels(state).decode(batch.topic, batch.partition, batch.messages, dead);
      if (labels !== null) state.session.learn(labels.frame, state.decoder.classes);
    } else {
      const events = state.events.decode(batch.topic, batch.partition, batch.messages, dead);
      if (events !== null) {
        const out = state.session.score(events.frame, state.decoder.classes);
        for (let from = 0; from < out.rows; from += SCORE_ROWS_PER_MESSAGE) {
          const ipc = encodeScores(
            out,
            events.eventTimes,
            from,
            Math.min(out.rows, from + SCORE_ROWS_PER_MESSAGE),
          );
          scores.push(scoresMessage(events.stream, ipc, SCORES_CONTENT_TYPE));
        }
        state.session.advance(events.stream, events.next);
        scored = out.rows;
      }
    }
    if (dead.length > 0) state.session.reject(dead.length);
    for (const d of dead) this.telemetry.deadLettered(d.code);
    return { outputs: this.outputs(key, state, scores, dead), scored, dead };
  }

  /** Drop the sessions of streams this instance no longer reads (`partition` scope). */
  keepOnly(streams: readonly string[]): string[] {
    if (this.settings.scope === 'global') return [];
    const dropped = [...this.states.keys()].filter((key) => !streams.includes(key));
    for (const key of dropped) {
      this.states.delete(key);
      this.telemetry.drop(key);
    }
    return dropped;
  }

  /**
   * Each session's run checkpoint as it is now, by scope key (`global`, or `topic/partition`): the
   * events decoder's state and the session's snapshot, as `replay --checkpoint` writes them, with
   * `{ source: 'kafka', labels }` (the labels topic or null) as the label timing.
   */
  checkpoints(createdAt: string): { key: string; checkpoint: RunCheckpoint }[] {
    const meta = { shoal: this.version, fingerprint: configFingerprint(this.config), createdAt };
    const labelTiming = { source: 'kafka', labels: this.settings.labels?.topic ?? null };
    return [...this.states].map(([key, state]) => ({
      key,
      checkpoint: runCheckpoint(
        { decoder: state.decoder.snapshot(), session: state.session.snapshot(), labelTiming },
        meta,
      ),
    }));
  }

  /** Close every session: the summary records to send before exit. */
  finish(): TopicOutputs[] {
    const out: TopicOutputs[] = [];
    for (const [key, state] of this.states) {
      if (state.session.scored > 0) state.session.finish(state.decoder.classes);
      out.push(...this.outputs(key, state, [], []));
    }
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

  private state(key: string): ScopeState {
    let state = this.states.get(key);
    if (state === undefined) {
      const decoder = new FrameDecoder(this.frameOptions, 'inputs');
      const journal: JournalRecord[] = [];
      let telemetry: SessionTelemetry | null = null;
      state = {
        decoder,
        events: new BatchDecoder(decoder, this.settings.events.format, this.settings.events.maxMessageBytes),
        labels: null,
        session: new LearningSession({
          config: this.config,
          source: `kafka:${this.settings.events.topics.join(',')}${key === 'global' ? '' : ` ${key}`}`,
          journal: {
            write: (r) => {
              telemetry?.record(r);
              journal.push(r);
            },
            flush: async () => undefined,
          },
          clock: liveClock({ monotonic: () => performance.now(), wall: () => Date.now() }),
          version: this.version,
        }),
        journal,
      };
      telemetry = SessionTelemetry.of(state.session, { checkpoints: false, wall: () => Date.now() });
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
