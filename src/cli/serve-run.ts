import type { WriteStream } from 'node:fs';
import type { Logger } from 'pino';
import type { Verdict } from '../ensembles/index.js';
import {
  encodeScores,
  FrameDecoder,
  type FrameOptions,
  SCORES_CONTENT_TYPE,
  type ScoreRows,
} from '../frames/index.js';
import type { JournalRecord } from '../journal/index.js';
import {
  type BatchControl,
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
import { LearningLoop, type RunConfig } from '../pipeline/index.js';

/** Rows per scores message: about 60 bytes a row (two classes), far below the broker's 1 MiB limit. */
const SCORE_ROWS_PER_MESSAGE = 4096;

/**
 * The running service's model side: for each fetched batch, decode it (bad messages become dead letters),
 * run it through the same `LearningLoop` `replay` uses (score, judge inline labels, train), and turn the
 * served verdicts, dead letters and journal records into the output messages of that batch. One model per
 * scope key: `global` (every partition) or one per `topic/partition`.
 */
export class ServeModels {
  private readonly states = new Map<string, ScopeState>();

  constructor(
    private readonly config: RunConfig,
    private readonly settings: KafkaSettings,
    private readonly frameOptions: FrameOptions,
    private readonly version: string,
    private readonly log: Logger,
    private readonly journalFile: WriteStream | null,
  ) {}

  /** The output messages for one batch (its scores, dead letters and journal records). */
  handle(batch: FetchedBatch): { outputs: TopicOutputs[]; scored: number; dead: number } {
    const key = this.settings.scope === 'global' ? 'global' : `${batch.topic}/${batch.partition}`;
    const state = this.state(key);
    const dead: DeadLetter[] = [];
    const events = state.batches.decode(batch.topic, batch.partition, batch.messages, dead);
    const scores: OutputMessage[] = [];
    if (events !== null) {
      const classes = state.decoder.classes;
      state.collector.start(events.frame.rows, Math.max(1, classes.length));
      state.loop.prequential(events.frame, classes, state.collector.served);
      const rows: ScoreRows = {
        rows: events.frame.rows,
        classes: classes.length > 0 ? classes : ['0'],
        ids: events.frame.ids,
        probabilities: state.collector.probabilities,
        predicted: state.collector.predicted,
        agreement: state.collector.agreement,
        voters: state.collector.voters,
        epoch: state.collector.epoch,
        eventTimes: events.eventTimes,
        scoredAt: Date.now(),
      };
      for (let from = 0; from < rows.rows; from += SCORE_ROWS_PER_MESSAGE) {
        const ipc = encodeScores(rows, from, Math.min(rows.rows, from + SCORE_ROWS_PER_MESSAGE));
        scores.push(scoresMessage(events.stream, ipc, SCORES_CONTENT_TYPE));
      }
    }
    for (const d of dead) {
      this.log.warn({ code: d.code, topic: d.topic, partition: d.partition, offset: d.offset }, d.reason);
    }
    return {
      outputs: this.outputs(key, state, scores, dead),
      scored: events?.frame.rows ?? 0,
      dead: dead.length,
    };
  }

  /** Drop the models of streams this instance no longer reads (`partition` scope). */
  keepOnly(streams: readonly string[]): void {
    if (this.settings.scope === 'global') return;
    for (const key of [...this.states.keys()]) {
      if (!streams.includes(key)) {
        this.states.delete(key);
        this.log.info({ stream: key }, 'partition revoked; its model is dropped');
      }
    }
  }

  /** Close every model: the summary records to send before exit. */
  finish(): TopicOutputs[] {
    const out: TopicOutputs[] = [];
    for (const [key, state] of this.states) {
      if (state.loop.rows > 0) state.loop.finish(state.decoder.classes);
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

  private state(key: string): ScopeState {
    let state = this.states.get(key);
    if (state === undefined) {
      const decoder = new FrameDecoder(this.frameOptions, 'inputs');
      const journal: JournalRecord[] = [];
      state = {
        decoder,
        batches: new BatchDecoder(decoder, this.settings.events.format, this.settings.events.maxMessageBytes),
        loop: new LearningLoop({
          config: this.config,
          source: `kafka:${this.settings.events.topics.join(',')}${key === 'global' ? '' : ` ${key}`}`,
          journal: (r) => journal.push(r),
          clock: () => performance.now(),
          version: this.version,
        }),
        collector: new VerdictCollector(),
        journal,
      };
      this.states.set(key, state);
    }
    return state;
  }
}

interface ScopeState {
  readonly decoder: FrameDecoder;
  readonly batches: BatchDecoder;
  readonly loop: LearningLoop;
  readonly collector: VerdictCollector;
  readonly journal: JournalRecord[];
}

/** Copies each served verdict into per-batch columns (buffers grown by doubling and reused). */
class VerdictCollector {
  probabilities = new Float64Array(0);
  predicted = new Int32Array(0);
  agreement = new Float64Array(0);
  voters = new Int32Array(0);
  epoch = new Int32Array(0);
  private classes = 1;

  start(rows: number, classes: number): void {
    this.classes = classes;
    if (this.predicted.length < rows) {
      const n = Math.max(rows, 2 * this.predicted.length);
      this.predicted = new Int32Array(n);
      this.agreement = new Float64Array(n);
      this.voters = new Int32Array(n);
      this.epoch = new Int32Array(n);
    }
    if (this.probabilities.length < rows * classes) {
      this.probabilities = new Float64Array(Math.max(rows * classes, 2 * this.probabilities.length));
    }
    this.probabilities.fill(0, 0, rows * classes);
  }

  readonly served = (row: number, v: Verdict): void => {
    const k = this.classes;
    const n = Math.min(k, v.classes);
    for (let c = 0; c < n; c++) this.probabilities[row * k + c] = v.probabilities[c]!;
    this.predicted[row] = v.predicted;
    this.agreement[row] = v.agreement;
    this.voters[row] = v.voters;
    this.epoch[row] = v.epoch;
  };
}

/** Pause fetching and keep the group membership while outputs wait for the broker. */
export function waitingWith(control: BatchControl): (attempt: number) => Promise<void> {
  return async () => {
    control.pause();
    await control.heartbeat().catch(() => undefined);
  };
}
