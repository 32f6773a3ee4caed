import { setTimeout as sleep } from 'node:timers/promises';
import { ConfigError } from '../core/index.js';
import { ArrowLayout, arrowStream, SCORES_CONTENT_TYPE } from '../frames/index.js';
import {
  createKafka,
  createLogger,
  ensureTopics,
  type KafkaSettings,
  OutputProducer,
  readSecrets,
  resolveKafkaSettings,
  type Secrets,
} from '../kafka/index.js';
import { resolveConfig } from '../pipeline/index.js';
import { CLASSES, FREIGHT_DEFAULTS, FREIGHT_SCHEMA, FreightScenario, OPERATOR } from '../scenario/index.js';
import { decimal, parse, positionals, text, whole } from './args.js';
import { IssueList, readConfigFile } from './config-file.js';
import { DEMO_CAUTION } from './demo.js';
import { LabelQueue } from './label-queue.js';
import { LegBatches } from './leg-batches.js';
import { count, type Terminal } from './terminal.js';

/** Topic and column names when no configuration names them (those of `deploy/shoal.yaml`). */
export const DEMO_STREAM_DEFAULTS = {
  events: 'legs',
  labels: 'legs-labels',
  id: 'leg_id',
  label: 'inspection',
} as const;

/** Legs per events message when the run is not paced (about 70 KB of Arrow IPC). */
const UNPACED_STEP = 500;
/** A paced run sends one events message a tenth of a second. */
const STEPS_PER_SECOND = 10;
/**
 * By default an inspection result is sent as soon as scenario time reaches it (and its leg was
 * acknowledged): serve reads the two topics independently, and a result that reaches it before its leg
 * is held for the leg (`labels.early`). `--label-wait` spaces results further from their legs, in wall
 * time, for a serve that holds no early labels (`labels.early: 0`).
 */
const DEFAULT_LABEL_WAIT_MS = 0;

export const DEMO_STREAM_HELP = `shoal demo-stream --brokers HOST:PORT [options]

Write the demo's invented refrigerated-freight scenario (${OPERATOR}) to Kafka, so that shoal serve
can be tried on a real broker: the same seeded generator as shoal demo, the same legs and the same
scripted drifts. Each trailer leg is a row of an Arrow IPC stream on the events topic (the id column and
the twelve features, no label); its inspection result (the id and accepted | rejected) goes to the
labels topic once it is known, 2–8 hours after the leg in scenario time. The topics are created when
missing. Scenario time runs as fast as the legs are sent: at --rate 200, an hour takes about 0.15 s.

Options:
  --brokers HOST:PORT[,HOST:PORT…]
                 the bootstrap brokers (required unless --config names them)
  --config FILE  a shoal.yaml for serve: brokers, TLS and SASL, the events and labels topics, the id and
                 label column names come from it, and every topic it names (scores, dead letters,
                 journal too) is created when missing
  --events TOPIC the events topic (default ${DEMO_STREAM_DEFAULTS.events})
  --labels TOPIC the labels topic (default ${DEMO_STREAM_DEFAULTS.labels})
  --rate N       send N legs a second (default: as fast as the broker acknowledges them)
  --rows N       legs to send (default ${count(FREIGHT_DEFAULTS.length)}; the script plays out over them)
  --forever      send until interrupted (Ctrl-C); the script plays out over the first ${count(FREIGHT_DEFAULTS.length)} legs
  --seed S       the scenario's seed (default 7, as shoal demo)
  --partitions N partitions of each topic it creates (default 1)
  --create-only  create the topics and exit, sending nothing (start serve next, then send)
  --label-wait MS
                 send an inspection result no sooner than MS after its leg, whatever scenario time says
                 (default ${DEFAULT_LABEL_WAIT_MS}: when scenario time says; a result that reaches serve before its
                 leg is held for it, labels.early in the configuration)
Columns: ${DEMO_STREAM_DEFAULTS.id} (utf8) and the features on the events topic; ${DEMO_STREAM_DEFAULTS.id} and
${DEMO_STREAM_DEFAULTS.label} (accepted | rejected) on the labels topic (the names in --config's inputs when given).

${DEMO_CAUTION}`;

/** Where the legs go and how to reach the broker. */
interface Target {
  readonly connection: Pick<KafkaSettings, 'clientId' | 'brokers' | 'tls' | 'sasl'>;
  readonly secrets: Secrets;
  readonly events: string;
  readonly labels: string;
  readonly id: string;
  readonly label: string;
  /** Every topic to create when missing. */
  readonly topics: readonly string[];
}

const NO_SECRETS: Secrets = { password: null, ca: null, cert: null, key: null };

export async function demoStream(args: readonly string[], terminal: Terminal): Promise<number> {
  const parsed = parse('demo-stream', args, {
    brokers: { type: 'string' },
    config: { type: 'string' },
    events: { type: 'string' },
    labels: { type: 'string' },
    rate: { type: 'string' },
    rows: { type: 'string' },
    forever: { type: 'boolean' },
    seed: { type: 'string' },
    partitions: { type: 'string' },
    'label-wait': { type: 'string' },
    'create-only': { type: 'boolean' },
  });
  if (parsed.values.help) {
    terminal.out(`${DEMO_STREAM_HELP}\n`);
    return 0;
  }
  positionals('demo-stream', parsed, []);
  const forever = parsed.values.forever === true;
  const given = whole(parsed, 'rows', 100);
  if (forever && given !== undefined) {
    terminal.err('shoal demo-stream: --forever sends until interrupted; --rows is ignored\n');
  }
  const total = forever ? null : (given ?? FREIGHT_DEFAULTS.length);
  const rate = decimal(parsed, 'rate');
  if (rate !== undefined && !(rate > 0)) {
    terminal.err(`shoal demo-stream: --rate must be > 0, got ${rate}\n`);
    return 2;
  }
  const partitions = whole(parsed, 'partitions', 1) ?? 1;
  const labelWait = whole(parsed, 'label-wait', 0) ?? DEFAULT_LABEL_WAIT_MS;
  const seed = text(parsed, 'seed') ?? '7';
  const target = await resolveTarget(
    text(parsed, 'config'),
    text(parsed, 'brokers'),
    text(parsed, 'events'),
    text(parsed, 'labels'),
  );

  const log = createLogger({ level: 'warn', pretty: true, destination: process.stderr });
  const kafka = createKafka(target.connection, target.secrets, log);
  const created = await ensureTopics(kafka, target.topics, partitions);
  if (parsed.values['create-only'] === true) {
    terminal.out(
      `shoal demo-stream: ${created.length > 0 ? `created topics: ${created.join(', ')}` : 'every topic exists already'} (${target.topics.join(', ')}); nothing sent\n`,
    );
    return 0;
  }
  const producer = new OutputProducer(kafka, log);
  await producer.connect();

  const scenario = new FreightScenario(seed, { length: total ?? FREIGHT_DEFAULTS.length });
  const width = FREIGHT_SCHEMA.features.length;
  const events = new ArrowLayout({
    id: target.id,
    schema: FREIGHT_SCHEMA,
    categories: FREIGHT_SCHEMA.features.map((f) => (f.kind === 'nominal' ? (f.categories ?? null) : null)),
    label: null,
    classes: CLASSES,
    labelsAsCodes: false,
  });
  const labels = new ArrowLayout({
    id: target.id,
    schema: { features: [] },
    categories: [],
    label: target.label,
    classes: CLASSES,
    labelsAsCodes: false,
  });
  const step =
    rate === undefined
      ? UNPACED_STEP
      : Math.max(1, Math.min(UNPACED_STEP, Math.round(rate / STEPS_PER_SECOND)));
  const values = new Float64Array(step * width);
  const ids = new Array<string>(step).fill('');
  const inspections = new LabelQueue('inspection results');
  const dueIds: string[] = [];
  let dueLabels = new Float64Array(step);
  const legs = new LegBatches(scenario, (index, what) => terminal.out(`  leg ${count(index)}: ${what}\n`));
  const every = total === null ? 10 * step * STEPS_PER_SECOND : Math.max(1000, Math.round(total / 10));

  let stop = false;
  const interrupt = (): void => {
    stop = true;
  };
  process.once('SIGINT', interrupt);
  process.once('SIGTERM', interrupt);
  terminal.out(
    `shoal demo-stream: ${OPERATOR}, seed ${seed}, ${total === null ? 'until interrupted' : `${count(total)} legs`}${rate === undefined ? '' : ` at ${count(rate)} legs/s`}\n` +
      `  events → ${target.events} (${target.id} + ${width} features, Arrow IPC)   inspection results → ${target.labels} (${target.id}, ${target.label})\n` +
      (created.length > 0 ? `  created topics: ${created.join(', ')}\n` : ''),
  );

  /** Send the labels due by scenario time `now` (after the events before them were acknowledged). */
  const sendDue = async (now: number): Promise<number> => {
    dueIds.length = 0;
    inspections.take(now, (frame, slot) => {
      if (dueIds.length === dueLabels.length) {
        const wider = new Float64Array(dueLabels.length * 2);
        wider.set(dueLabels);
        dueLabels = wider;
      }
      dueLabels[dueIds.length] = frame.labels![slot]!;
      dueIds.push(frame.ids![slot]!);
    });
    const n = dueIds.length;
    for (let from = 0; from < n; from += UNPACED_STEP) {
      const to = Math.min(n, from + UNPACED_STEP);
      const batch = labels.batch(to - from, values, dueLabels.subarray(from, to), dueIds.slice(from, to));
      await deliver(producer, target.labels, arrowStream(batch));
    }
    return n;
  };

  // When each events message was acknowledged (wall ms) and the scenario time of its last leg: a result
  // goes out once scenario time has reached it and its leg's message is labelWait old.
  const acked: { wall: number; time: number }[] = [];
  let sentUpTo = Number.NEGATIVE_INFINITY;
  const releasable = (): number => {
    const cutoff = terminal.now() - labelWait;
    while (acked.length > 0 && acked[0]!.wall <= cutoff) sentUpTo = acked.shift()!.time;
    return Math.min(scenario.leg.time, sentUpTo);
  };
  const started = terminal.now();
  let sent = 0;
  let labelled = 0;
  let nextProgress = every;
  try {
    while (!stop && (total === null || sent < total)) {
      const rows = total === null ? step : Math.min(step, total - sent);
      legs.fill(rows, values, ids, inspections);
      await deliver(producer, target.events, arrowStream(events.batch(rows, values, null, ids)));
      sent += rows;
      acked.push({ wall: terminal.now(), time: scenario.leg.time });
      labelled += await sendDue(releasable());
      if (sent >= nextProgress) {
        progress(terminal, sent, labelled, scenario.leg.time, terminal.now() - started);
        nextProgress += every;
      }
      if (rate !== undefined) {
        const ahead = (sent / rate) * 1000 - (terminal.now() - started);
        if (ahead > 0) await sleep(ahead);
      }
    }
    if (!stop) {
      // The inspections still out come in as scenario time goes on after the last leg.
      const last = acked[acked.length - 1];
      if (last !== undefined) await sleep(Math.max(0, last.wall + labelWait - terminal.now()));
      labelled += await sendDue(scenario.leg.time + scenario.options.labelHours[1] * 3_600_000);
    }
  } finally {
    process.off('SIGINT', interrupt);
    process.off('SIGTERM', interrupt);
    await producer.stop();
  }
  progress(terminal, sent, labelled, scenario.leg.time, terminal.now() - started);
  terminal.out(
    `shoal demo-stream: sent ${count(sent)} legs to ${target.events} and ${count(labelled)} inspection results to ${target.labels}${stop ? ' (interrupted; the results still out were not sent)' : ''}\n`,
  );
  return 0;
}

function progress(
  terminal: Terminal,
  sent: number,
  labelled: number,
  scenarioTime: number,
  ms: number,
): void {
  const when = new Date(scenarioTime).toISOString().slice(0, 16).replace('T', ' ');
  terminal.out(
    `  ${count(sent)} legs sent, ${count(labelled)} inspection results · scenario time ${when} · ${count(sent / Math.max(ms / 1000, 1e-3))} legs/s\n`,
  );
}

/** One message, acknowledged by all in-sync replicas (retried while the broker is away). */
async function deliver(producer: OutputProducer, topic: string, ipc: Uint8Array): Promise<void> {
  const value = Buffer.from(ipc.buffer, ipc.byteOffset, ipc.byteLength);
  await producer.deliver(
    [{ topic, messages: [{ value, headers: { 'content-type': SCORES_CONTENT_TYPE } }] }],
    async () => undefined,
  );
}

/** Brokers, security, topics and column names from the options and, when given, serve's configuration. */
async function resolveTarget(
  configPath: string | undefined,
  brokers: string | undefined,
  events: string | undefined,
  labels: string | undefined,
): Promise<Target> {
  const given = brokers?.split(',').map((b) => b.trim());
  if (configPath === undefined) {
    if (given === undefined) {
      throw new ConfigError('demo-stream', [
        { path: '--brokers', code: 'required', message: 'name the brokers (HOST:PORT) or give --config' },
      ]);
    }
    const bad = given.find((b) => !/^[^\s:]+:\d{1,5}$/.test(b));
    if (bad !== undefined) {
      throw new ConfigError('demo-stream', [
        { path: '--brokers', code: 'wrong-type', message: `expected HOST:PORT, got ${JSON.stringify(bad)}` },
      ]);
    }
    const e = events ?? DEMO_STREAM_DEFAULTS.events;
    const l = labels ?? DEMO_STREAM_DEFAULTS.labels;
    return {
      connection: { clientId: 'shoal-demo-stream', brokers: given, tls: null, sasl: null },
      secrets: NO_SECRETS,
      events: e,
      labels: l,
      id: DEMO_STREAM_DEFAULTS.id,
      label: DEMO_STREAM_DEFAULTS.label,
      topics: [e, l],
    };
  }
  const raw = ((await readConfigFile(configPath)) ?? {}) as Record<string, unknown>;
  const { kafka: section, telemetry: _telemetry, ...rest } = raw;
  const found = new IssueList();
  const issues = found.issues;
  const collect = <T>(f: () => T): T | null => found.collect(f);
  const run = collect(() => resolveConfig(rest, configPath));
  const settings = collect(() => resolveKafkaSettings(section, configPath));
  if (settings !== null && settings.labels === null && labels === undefined) {
    issues.push({
      path: 'kafka.labels.topic',
      code: 'required',
      message: 'the inspection results need a labels topic (or give --labels)',
    });
  }
  if (run !== null && run.inputs.id === null) {
    issues.push({
      path: 'inputs.id',
      code: 'required',
      message: 'name the id column (leg ids join the labels)',
    });
  }
  const secrets = settings === null ? null : collect(() => readSecrets(settings, process.env, configPath));
  if (run === null || settings === null || secrets === null || issues.length > 0) {
    throw new ConfigError(configPath, issues);
  }
  const e = events ?? settings.events.topics[0]!;
  const l = labels ?? settings.labels!.topic;
  const outputs = [settings.scores.topic, settings.deadLetters.topic];
  if (settings.journal.topic !== null) outputs.push(settings.journal.topic);
  return {
    connection: { ...settings, clientId: 'shoal-demo-stream', ...(given ? { brokers: given } : {}) },
    secrets,
    events: e,
    labels: l,
    id: run.inputs.id!,
    label: run.inputs.label ?? DEMO_STREAM_DEFAULTS.label,
    topics: [e, l, ...outputs],
  };
}
