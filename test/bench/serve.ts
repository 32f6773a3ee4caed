import { readFileSync } from 'node:fs';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { tableFromIPC } from 'apache-arrow';
import type { KafkaMessage } from 'kafkajs';
import { stringify } from 'yaml';
import { eventOptions } from '../../src/cli/serve.js';
import { ServeModels } from '../../src/cli/serve-run.js';
import { numericSchema } from '../../src/core/index.js';
import { createEnsemble, Verdict } from '../../src/ensembles/index.js';
import { encodeScores, FrameDecoder, SCORES_CONTENT_TYPE } from '../../src/frames/index.js';
import {
  BatchDecoder,
  createKafka,
  type DeadLetter,
  type EventBatch,
  EventConsumer,
  type KafkaSettings,
  OutputProducer,
  readSecrets,
  resolveKafkaSettings,
  scoresMessage,
  type TopicOutputs,
} from '../../src/kafka/index.js';
import { type RunConfig, resolveConfig } from '../../src/pipeline/index.js';
import { KafkaBroker } from '../support/kafka-broker.js';
import { uniqueName } from '../support/kafka-names.js';
import {
  client,
  produce,
  quietLogger,
  readTopic,
  ServeProcess,
  waitCommitted,
} from '../support/kafka-serve.js';
import { eventMessages, ROWS_PER_MESSAGE, rawBatch } from './events.js';
import { type BenchFn, type BenchRow, machine, median, medianRate } from './harness.js';

/**
 * End to end over a real broker: events/s from an events topic to a scores topic through `shoal serve`
 * (the binary, a child process) with bagging ×10 (λ = 1, no lifecycle) and inline labels, the events in
 * 1,000-row Arrow IPC messages of the 10-feature stream of `stream.ts`; beside it, in the same run, the
 * learning core on the same rows in this process (no Kafka, no decoding), the service's model side on the
 * same messages in this process (decode, session, encode: `ServeModels.handle`, no broker), and a
 * pass-through over the broker (the service's consumer, decoder, scores encoder and producer, no model).
 *
 * The broker is the test harness's (`test/support/kafka-broker.ts`: Apache Kafka 4.1.1, one KRaft node on
 * 127.0.0.1), or the cluster `KAFKA_BROKERS` names. The scores topics are created with
 * `message.timestamp.type=LogAppendTime`, so each scores record carries the moment the broker appended it.
 *
 * - Throughput: every event is on the topic before the service starts; the rate is the rows after the
 *   first scores record over the time from the first scores record's append to the last one's, so the
 *   service's start and group join are not counted.
 * - Latency, at a fixed offered load of half the measured serve rate: events are produced one 1,000-row
 *   message at a time on a fixed schedule for a bounded time and count. *Produce time* is the events
 *   record's timestamp, set by the producer to the wall clock just before it sends (CreateTime); the
 *   service copies it into each score row's `event_time`. *Score time* is the broker's append time of the
 *   scores record that holds the row (LogAppendTime): the score is on the topic, readable. Latency is
 *   their difference, per row; `latency_ms` in the scores (produce time to the moment of scoring, before
 *   the scores are sent) is printed beside it. Both clocks are this machine's.
 * - Three runs of serve (one with `--quick`), each on topics and a group of its own and each right after
 *   a timed run of the core, so that each run's ratio to the core is of one moment's load; the figures
 *   are the medians over the runs (a single run of 200,000 rows lasts a few seconds, and one busy spell
 *   of the shared host moved it by ±40%), and each run's ratio and p99 are printed beside them.
 */
const SPEC = { kind: 'bagging', members: 10, lambda: 1, lifecycle: { enabled: false } } as const;
const RUN = { seed: 'bench-serve', ensemble: SPEC, inputs: { id: 'id', label: 'label' } };
/** Messages per in-process batch: about what one kafkajs fetch of 1 MiB per partition holds. */
const FETCH_MESSAGES = 8;

export const bench: BenchFn = async ({ quick }) => {
  const rows = quick ? 20_000 : 200_000;
  const latencySeconds = quick ? 3 : 10;
  const latencyMessages = quick ? 60 : 400;
  const stream = eventMessages(rows + latencyMessages * ROWS_PER_MESSAGE, 'bench-serve');
  const messages = stream.messages.slice(0, rows / ROWS_PER_MESSAGE);
  const paced = stream.messages.slice(rows / ROWS_PER_MESSAGE);
  const runs = quick ? 1 : 3;
  const core = () => coreRate(stream.rows, stream.labels, rows, stream.width);

  // The core's compiler warms up before any of its runs is timed.
  core();
  const inProcess = await cpuTimed(rows * (runs + (runs > 1 ? 1 : 0)), () =>
    modelSideRate(messages, rows, runs),
  );

  const external = process.env.KAFKA_BROKERS?.trim();
  const broker = external ? null : await KafkaBroker.start();
  const brokers = external || broker!.bootstrap;
  const dir = await mkdtemp(join(tmpdir(), 'shoal-bench-serve-'));
  try {
    const base = uniqueName('bench-serve');
    const dead = `${base}-dead`;
    const passEvents = `${base}-pass-events`;
    const passScores = `${base}-pass-scores`;
    await createTopics(brokers, [passEvents, dead], [passScores]);
    await produce(
      brokers,
      passEvents,
      messages.map((value) => ({ value })),
    );
    await passThrough(brokers, { events: passEvents, scores: passScores, dead }, messages.length);
    const pass = spanRate(await readAll(brokers, passScores));

    // Each run of serve right after a timed run of the core, so that each ratio is of one moment's load.
    const rounds: Round[] = [];
    for (let run = 0; run < runs; run++) {
      const coreNow = await cpuTimed(rows, core);
      const t = {
        events: `${base}-events-${run}`,
        scores: `${base}-scores-${run}`,
        dead,
        group: `${base}-group-${run}`,
      };
      await createTopics(brokers, [t.events], [t.scores]);
      await produce(
        brokers,
        t.events,
        messages.map((value) => ({ value })),
      );
      const config = join(dir, `serve-${run}.yaml`);
      await writeFile(config, stringify({ ...RUN, kafka: kafkaSection(brokers, t, t.group, t.scores) }));
      rounds.push({
        core: coreNow,
        ...(await serveOnce(config, brokers, t, messages.length, paced, latencySeconds)),
      });
    }

    const served = median(rounds.map((r) => r.served));
    const servedCpu = median(rounds.map((r) => r.servedCpu));
    const coreWall = median(rounds.map((r) => r.core.wall));
    const coreCpu = median(rounds.map((r) => r.core.cpu));
    const ofCore = median(rounds.map((r) => r.served / r.core.wall));
    const cpuOfCore = median(rounds.map((r) => r.servedCpu / r.core.cpu));
    const latency = medianLatency(rounds.map((r) => r.latency));
    const each = (f: (r: Round) => number, digits: number): string =>
      rounds.map((r) => f(r).toFixed(digits)).join(', ');
    const perCpu = (rate: number): string =>
      `${Math.round(rate).toLocaleString('en-US')} rows per CPU second`;
    const rowsOut: BenchRow[] = [
      {
        name: 'core: bagging ×10 in process, no Kafka',
        rate: coreWall,
        unit: 'rows/s',
        note: perCpu(coreCpu),
      },
      {
        name: 'model side in process (decode, session, encode)',
        rate: inProcess.wall,
        unit: 'rows/s',
        note: `${(inProcess.wall / coreWall).toFixed(2)}× core; ${perCpu(inProcess.cpu)}`,
      },
      {
        name: 'pass-through over the broker (no model)',
        rate: pass,
        unit: 'rows/s',
        note: 'decode + encode only: the in-run reference',
      },
      {
        name: 'shoal serve over the broker, bagging ×10',
        rate: served,
        unit: 'rows/s',
        note: `${(served / pass).toFixed(2)}× pass-through; serve's process: ${perCpu(servedCpu)}`,
      },
      {
        name: 'serve ÷ core',
        rate: ofCore,
        unit: '×',
        note: `target ≥ 0.7; runs ${each((r) => r.served / r.core.wall, 2)}`,
      },
      {
        name: 'serve ÷ core, by CPU time',
        rate: cpuOfCore,
        unit: '×',
        note: `rows per CPU second of serve's process ÷ the core's; runs ${each((r) => r.servedCpu / r.core.cpu, 2)}`,
      },
      {
        name: `latency at half the serve rate, p50`,
        rate: latency.p50,
        unit: 'ms',
        note: `produce → score on topic; to scoring ${latency.scoredP50.toFixed(1)} ms`,
      },
      {
        name: `latency at half the serve rate, p99`,
        rate: latency.p99,
        unit: 'ms',
        note: `target ≤ 50 ms; runs ${each((r) => r.latency.p99, 0)} ms; to scoring ${latency.scoredP99.toFixed(1)} ms; ${latency.messages} messages a run; serve busy ${Math.round(100 * latency.busy)}% of a core`,
      },
    ];
    return {
      title: `End to end over a real broker (${external ? `KAFKA_BROKERS ${external}` : 'Apache Kafka 4.1.1, one KRaft node'}): ${rows.toLocaleString('en-US')} rows in ${ROWS_PER_MESSAGE}-row Arrow messages, inline labels, ${runs} run${runs > 1 ? 's' : ''} (medians)`,
      rows: rowsOut,
      json: {
        machine: machine(),
        rows,
        rowsPerMessage: ROWS_PER_MESSAGE,
        ensemble: SPEC,
        runs,
        core: { rowsPerSecond: coreWall, rowsPerCpuSecond: coreCpu },
        modelSide: { rowsPerSecond: inProcess.wall, rowsPerCpuSecond: inProcess.cpu },
        passThrough: { rowsPerSecond: pass },
        serve: {
          rowsPerSecond: served,
          rowsPerCpuSecond: servedCpu,
          ofCore,
          ofCoreByCpu: cpuOfCore,
          ofPassThrough: served / pass,
        },
        latency,
        each: rounds.map((r) => ({
          core: r.core.wall,
          served: r.served,
          ofCore: r.served / r.core.wall,
          ofCoreByCpu: r.servedCpu / r.core.cpu,
          p50: r.latency.p50,
          p99: r.latency.p99,
        })),
      },
    };
  } finally {
    await rm(dir, { recursive: true, force: true });
    await broker?.destroy();
  }
};

/** One run of serve with the core timed just before it. */
interface Round {
  readonly core: { wall: number; cpu: number };
  readonly served: number;
  readonly servedCpu: number;
  readonly latency: Latency;
}

/**
 * `shoal serve` as a child process on an events topic holding `messages` messages: its rate (from the
 * scores' append times) and rows per CPU second from joining the group to the last commit; then the
 * latency at half that rate, `paced` messages produced one at a time for `seconds` at most.
 */
async function serveOnce(
  config: string,
  brokers: string,
  t: { events: string; scores: string; group: string },
  messages: number,
  paced: readonly Buffer[],
  seconds: number,
): Promise<Omit<Round, 'core'>> {
  const serve = new ServeProcess(config);
  try {
    // Its CPU time from joining the group (it fetches at once: the events are on the topic) to the end.
    await serve.waitFor('joined the group', 120_000);
    const joined = cpuSeconds(serve.pid);
    await waitCommitted(brokers, t.group, { [t.events]: messages }, 600_000);
    const servedCpu = (messages * ROWS_PER_MESSAGE) / (cpuSeconds(serve.pid) - joined);
    const scoresBefore = await readAll(brokers, t.scores);
    const served = spanRate(scoresBefore);
    // Half the measured maximum, one message at a time, for a bounded time and count.
    const offered = served / 2;
    const count = Math.max(5, Math.min(paced.length, Math.floor((offered * seconds) / ROWS_PER_MESSAGE)));
    const cpu0 = cpuSeconds(serve.pid);
    const wall0 = performance.now();
    await pace(brokers, t.events, paced.slice(0, count), offered);
    await waitCommitted(brokers, t.group, { [t.events]: messages + count }, 120_000);
    const busy = (cpuSeconds(serve.pid) - cpu0) / ((performance.now() - wall0) / 1000);
    const all = await readAll(brokers, t.scores);
    const latency = { offered, ...latencies(all.slice(scoresBefore.length)), messages: count, busy };
    serve.signal('SIGTERM');
    const code = await serve.exited;
    if (code !== 0) throw new Error(`shoal serve exited ${code}: ${serve.stderr}`);
    return { served, servedCpu, latency };
  } finally {
    serve.signal('SIGKILL');
  }
}

/** Each field of the runs' latencies, the median over the runs. */
function medianLatency(runs: readonly Latency[]): Latency {
  const of = (f: (l: Latency) => number): number => median(runs.map(f));
  return {
    offered: of((l) => l.offered),
    messages: of((l) => l.messages),
    busy: of((l) => l.busy),
    rows: of((l) => l.rows),
    p50: of((l) => l.p50),
    p99: of((l) => l.p99),
    scoredP50: of((l) => l.scoredP50),
    scoredP99: of((l) => l.scoredP99),
  };
}

/** The learning core: prequential rows/s of the same ensemble on the same rows, one thread, one run. */
function coreRate(values: Float64Array, labels: Int32Array, rows: number, width: number): number {
  const schema = numericSchema(width);
  const verdict = new Verdict();
  return medianRate(
    rows,
    () => {
      const ensemble = createEnsemble(SPEC, schema, 'bench-serve-core');
      ensemble.ensureClasses(2);
      let correct = 0;
      for (let i = 0; i < rows; i++) {
        ensemble.scoreTrain(values, i * width, labels[i]!, verdict);
        if (verdict.predicted === labels[i]) correct++;
      }
      return correct;
    },
    1,
    0,
  );
}

/**
 * `shoal serve`'s model side on the same messages without a broker: decode, session, encode (a batch is
 * handled asynchronously, as the service does: members may be on worker threads). Timed as
 * `medianRate` times a synchronous body: a warm-up run when there are several, then the median.
 */
async function modelSideRate(messages: readonly Buffer[], rows: number, runs: number): Promise<number> {
  const { config, settings } = serveSettings('127.0.0.1:9', {
    events: 'bench-events',
    scores: 'bench-scores',
    dead: 'bench-dead',
    group: 'bench',
  });
  const now = Date.now();
  const batches: ReturnType<typeof rawBatch>[] = [];
  for (let i = 0; i < messages.length; i += FETCH_MESSAGES)
    batches.push(rawBatch(messages, i, Math.min(messages.length, i + FETCH_MESSAGES), now));
  const rates: number[] = [];
  for (let run = runs > 1 ? -1 : 0; run < runs; run++) {
    const t0 = process.hrtime.bigint();
    const models = new ServeModels(config, settings, eventOptions(config, settings), 'bench', null, false);
    for (const batch of batches)
      await models.handle({ topic: 'bench-events', partition: 0, messages: batch, lag: 0 });
    if (run >= 0) rates.push(rows / (Number(process.hrtime.bigint() - t0) / 1e9));
  }
  return median(rates);
}

function kafkaSection(
  brokers: string,
  t: { readonly events: string; readonly dead: string },
  group: string,
  scores: string,
): Record<string, unknown> {
  return {
    brokers: brokers.split(','),
    group,
    events: { topics: [t.events] },
    scores: { topic: scores },
    deadLetters: { topic: t.dead },
    log: { level: 'info' },
  };
}

function serveSettings(
  brokers: string,
  t: { events: string; scores: string; dead: string; group: string },
): { config: RunConfig; settings: KafkaSettings } {
  return {
    config: resolveConfig(RUN, 'bench'),
    settings: resolveKafkaSettings(kafkaSection(brokers, t, t.group, t.scores), 'bench'),
  };
}

/** Topics of one partition; those of `appended` carry the broker's append time on each record. */
async function createTopics(
  brokers: string,
  plain: readonly string[],
  appended: readonly string[],
): Promise<void> {
  const admin = client(brokers).admin();
  await admin.connect();
  // The broker's append time on each scores record: the moment the score is on the topic.
  const appendTime = [{ name: 'message.timestamp.type', value: 'LogAppendTime' }];
  await admin.createTopics({
    topics: [
      ...plain.map((topic) => ({ topic, numPartitions: 1 })),
      ...appended.map((topic) => ({ topic, numPartitions: 1, configEntries: appendTime })),
    ],
    waitForLeaders: true,
  });
  await admin.disconnect();
}

/**
 * The pass-through: the service's consumer, batch decoder, scores encoder and output producer, with no
 * model (every row gets zero probabilities), until `messages` events messages were handled.
 */
async function passThrough(
  brokers: string,
  t: { events: string; scores: string; dead: string },
  messages: number,
): Promise<void> {
  const { config, settings } = serveSettings(brokers, { ...t, group: `${t.events}-group` });
  const log = quietLogger();
  const kafka = createKafka(settings, readSecrets(settings, {}, 'bench'), log);
  const producer = new OutputProducer(kafka, log);
  const frames = new FrameDecoder(eventOptions(config, settings), 'inputs');
  const decoder = new BatchDecoder(frames, 'arrow', settings.events.maxMessageBytes);
  const consumer = new EventConsumer(kafka, settings, log, async () => undefined);
  let handled = 0;
  let finish: () => void = () => undefined;
  const finished = new Promise<void>((done) => {
    finish = done;
  });
  // As the service does: a batch's outputs go out while the next one is handled, in order.
  let delivering: Promise<boolean> = Promise.resolve(true);
  await producer.connect();
  await consumer.connect();
  await consumer.start(async (batch) => {
    const dead: DeadLetter[] = [];
    const events = decoder.decode(batch.topic, batch.partition, batch.messages, dead);
    const outputs: TopicOutputs[] =
      events === null ? [] : [{ topic: t.scores, messages: noModelScores(events, frames.classes) }];
    const acknowledged = delivering.then(async (before) => {
      const delivered = before && (await producer.deliver(outputs, async () => undefined));
      handled += batch.messages.length;
      if (handled >= messages) finish();
      return delivered;
    });
    delivering = acknowledged;
    return { acknowledged };
  });
  await finished;
  await consumer.stop();
  await producer.stop();
}

/** Scores messages of a frame with no model: zero probabilities, the first class, no voters. */
function noModelScores(events: EventBatch, classes: readonly string[]): TopicOutputs['messages'] {
  const n = events.frame.rows;
  const scores = {
    first: 0,
    rows: n,
    classes,
    ids: events.frame.ids,
    probabilities: new Float64Array(n * Math.max(1, classes.length)),
    predicted: new Int32Array(n),
    values: new Float64Array(n),
    agreement: new Float64Array(n),
    voters: new Int32Array(n),
    epoch: new Int32Array(n),
    scoredAt: Date.now(),
  };
  return [scoresMessage(events.stream, encodeScores(scores, events.eventTimes), SCORES_CONTENT_TYPE)];
}

/** Every record of a one-partition topic, up to its end now. */
async function readAll(brokers: string, topic: string): Promise<KafkaMessage[]> {
  const admin = client(brokers).admin();
  await admin.connect();
  const [end] = await admin.fetchTopicOffsets(topic);
  await admin.disconnect();
  const high = Number(end?.high ?? 0);
  return high === 0 ? [] : readTopic(brokers, topic, (seen) => seen.length >= high);
}

/** Rows per second from the first record's append time to the last's, counting the rows after the first. */
function spanRate(records: readonly KafkaMessage[]): number {
  const rows = records.map((m) => tableFromIPC(m.value!).numRows);
  const first = Number(records[0]!.timestamp);
  const last = Number(records[records.length - 1]!.timestamp);
  const after = rows.slice(1).reduce((a, b) => a + b, 0);
  return after / (Math.max(1, last - first) / 1000);
}

/**
 * Send one message every `1000 · ROWS_PER_MESSAGE / offered` ms on a fixed schedule (not waiting for the
 * previous acknowledgement), each stamped with the wall clock just before it goes.
 */
async function pace(
  brokers: string,
  topic: string,
  values: readonly Buffer[],
  offered: number,
): Promise<void> {
  const producer = client(brokers).producer();
  await producer.connect();
  const every = (1000 * ROWS_PER_MESSAGE) / offered;
  const began = performance.now();
  const sends: Promise<unknown>[] = [];
  for (let i = 0; i < values.length; i++) {
    const wait = began + i * every - performance.now();
    if (wait > 0) await new Promise((done) => setTimeout(done, wait));
    sends.push(
      producer.send({ topic, acks: -1, messages: [{ value: values[i]!, timestamp: String(Date.now()) }] }),
    );
  }
  await Promise.all(sends);
  await producer.disconnect();
}

interface Latency {
  readonly offered: number;
  readonly messages: number;
  /** CPU seconds of serve's process per second of the latency phase (1 = one core always busy). */
  readonly busy: number;
  readonly rows: number;
  /** Produce time → the scores record's append time (ms). */
  readonly p50: number;
  readonly p99: number;
  /** Produce time → the moment of scoring (`latency_ms` of the scores, ms). */
  readonly scoredP50: number;
  readonly scoredP99: number;
}

function latencies(records: readonly KafkaMessage[]): Omit<Latency, 'offered' | 'messages' | 'busy'> {
  const onTopic: number[] = [];
  const scored: number[] = [];
  for (const m of records) {
    const table = tableFromIPC(m.value!);
    const appended = Number(m.timestamp);
    const times = table.getChild('event_time')!;
    const toScore = table.getChild('latency_ms')!;
    for (let r = 0; r < table.numRows; r++) {
      onTopic.push(appended - Number(times.get(r)));
      scored.push(Number(toScore.get(r)));
    }
  }
  return {
    rows: onTopic.length,
    p50: percentile(onTopic, 0.5),
    p99: percentile(onTopic, 0.99),
    scoredP50: percentile(scored, 0.5),
    scoredP99: percentile(scored, 0.99),
  };
}

/** The nearest-rank percentile (the smallest value with at least a share `q` of the values ≤ it). */
function percentile(values: readonly number[], q: number): number {
  if (values.length === 0) return Number.NaN;
  const s = [...values].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.ceil(q * s.length) - 1)]!;
}

/**
 * A wall-clock rate (`measure()`) beside the rows per CPU second of this process over the same work
 * (`items` rows in all, warm-up included): CPU time is steadier than wall time on a shared machine.
 */
async function cpuTimed(
  items: number,
  measure: () => number | Promise<number>,
): Promise<{ wall: number; cpu: number }> {
  const before = process.cpuUsage();
  const wall = await measure();
  const used = process.cpuUsage(before);
  return { wall, cpu: items / ((used.user + used.system) / 1e6) };
}

/** User + system CPU seconds a process has used so far (Linux /proc; NaN elsewhere). */
function cpuSeconds(pid: number | undefined): number {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    // Fields after the command name (which may hold spaces): utime and stime are the 12th and 13th.
    const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    return (Number(fields[11]) + Number(fields[12])) / CLOCK_TICKS;
  } catch {
    return Number.NaN;
  }
}

/** The kernel's clock ticks per second for /proc times (USER_HZ: 100 on Linux, from memory). */
const CLOCK_TICKS = 100;
