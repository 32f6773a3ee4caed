import { once } from 'node:events';
import { createWriteStream, type WriteStream } from 'node:fs';
import { stringify } from 'yaml';
import { ConfigError, type ConfigIssue, ShoalError } from '../core/index.js';
import { DEFAULT_LABEL, type FrameOptions } from '../frames/index.js';
import {
  createKafka,
  createLogger,
  EventConsumer,
  KafkaCheckpointStore,
  type KafkaSettings,
  OutputProducer,
  readSecrets,
  resolveKafkaSettings,
} from '../kafka/index.js';
import { type RunConfig, resolveConfig } from '../pipeline/index.js';
import { parseListen, TelemetryServer } from '../telemetry/index.js';
import { parse, positionals, text, whole } from './args.js';
import { IssueList, readConfigFile } from './config-file.js';
import { LabelHold } from './label-hold.js';
import { frameOptions } from './replay.js';
import { checkpointing, ServeCheckpoints } from './serve-checkpoints.js';
import { ServeModels } from './serve-run.js';
import type { Terminal } from './terminal.js';
import { shoalVersion } from './version.js';

export const SERVE_HELP = `shoal serve --config shoal.yaml [--check]

Score a Kafka events topic live: a consumer group reads Arrow IPC or NDJSON events, every event is
scored (scores go to the scores topic as Arrow IPC), inline labels judge and train the ensemble, and
messages that cannot be used go to the dead-letter topic with their reason. Offsets are committed only
after a batch's outputs are acknowledged and, with kafka.checkpoint, once a checkpoint covers them; a
restart goes on from the newest checkpoint's offsets. SIGTERM or SIGINT: finish the batch in flight,
checkpoint, flush, commit, exit 0.

Options:
  --config FILE   shoal.yaml: the ensemble, evaluation and inputs settings, a kafka: section, and
                  optionally telemetry: { listen: HOST:PORT } for /metrics, /healthz, /readyz, /status
  --threads N     train the members of a bagging on N worker threads (ensemble.threads; default 1):
                  the same scores, journal and checkpoints as one thread; the consumer's event loop
                  (heartbeats, scrapes) keeps turning while they train
  --check         print the effective configuration, or every problem with its path, and exit`;

export async function serve(args: readonly string[], terminal: Terminal): Promise<number> {
  const parsed = parse('serve', args, {
    config: { type: 'string' },
    threads: { type: 'string' },
    check: { type: 'boolean' },
  });
  if (parsed.values.help) {
    terminal.out(`${SERVE_HELP}\n`);
    return 0;
  }
  positionals('serve', parsed, []);
  const path = text(parsed, 'config');
  if (path === undefined) {
    terminal.err('shoal serve: --config FILE is required (see shoal serve --help)\n');
    return 2;
  }
  const raw = withThreads(await readConfigFile(path), whole(parsed, 'threads'));
  const checked = checkServeConfig(raw, path);
  if ('issues' in checked) {
    terminal.err(
      `shoal serve: ${path} has ${checked.issues.length} problem${checked.issues.length === 1 ? '' : 's'}:\n${checked.issues
        .map((i) => `  ${i.path}: ${i.message}\n`)
        .join('')}`,
    );
    return 2;
  }
  if (parsed.values.check === true) {
    const { threads, ...run } = checked.run;
    terminal.out(
      stringify({
        ...run,
        ensemble: { ...run.ensemble, threads },
        kafka: checked.kafka,
        telemetry: checked.telemetry,
      }),
    );
    return 0;
  }
  return run(checked, terminal);
}

interface ServeConfig {
  readonly run: RunConfig;
  readonly kafka: KafkaSettings;
  /** Where the telemetry endpoint listens; null: no endpoint. */
  readonly telemetry: { readonly listen: { readonly host: string; readonly port: number } | null };
}

/** The `telemetry:` section: `listen: HOST:PORT` (or `:PORT`, loopback); absent, no endpoint. */
function telemetrySettings(raw: unknown): ServeConfig['telemetry'] {
  if (raw === undefined || raw === null) return { listen: null };
  const section = raw as Record<string, unknown>;
  const issues: ConfigIssue[] = [];
  if (typeof raw !== 'object' || Array.isArray(raw)) {
    issues.push({
      path: 'telemetry',
      code: 'wrong-type',
      message: 'expected a mapping with listen: HOST:PORT',
    });
  } else {
    for (const key of Object.keys(section)) {
      if (key !== 'listen')
        issues.push({
          path: `telemetry.${key}`,
          code: 'unknown-setting',
          message: 'unknown setting (known: listen)',
        });
    }
  }
  let listen: { host: string; port: number } | null = null;
  if (issues.length === 0 && section.listen !== undefined) {
    try {
      listen = parseListen(String(section.listen), 'telemetry.listen');
    } catch (e) {
      if (!(e instanceof ShoalError)) throw e;
      issues.push({
        path: 'telemetry.listen',
        code: 'wrong-type',
        message: e.message.replace(/^telemetry\.listen: /, ''),
      });
    }
  }
  if (issues.length > 0) throw new ConfigError('telemetry', issues);
  return { listen };
}

/** `--threads` folded into the configuration's `ensemble.threads`, so that it is checked like the file. */
function withThreads(raw: unknown, threads: number | undefined): unknown {
  if (threads === undefined || raw === null || typeof raw !== 'object' || Array.isArray(raw)) return raw;
  const config = raw as Record<string, unknown>;
  return { ...config, ensemble: { ...((config.ensemble ?? {}) as Record<string, unknown>), threads } };
}

/** Check the run settings, the kafka section and the secrets it names, collecting every problem. */
function checkServeConfig(raw: unknown, source: string): ServeConfig | { issues: ConfigIssue[] } {
  const found = new IssueList();
  const issues = found.issues;
  const collect = <T>(f: () => T): T | null => found.collect(f);
  const { kafka: section, telemetry: telemetrySection, ...rest } = (raw ?? {}) as Record<string, unknown>;
  const run = collect(() => resolveConfig(rest, source));
  const kafka = collect(() => resolveKafkaSettings(section, source));
  const telemetry = collect(() => telemetrySettings(telemetrySection));
  if (kafka !== null) collect(() => readSecrets(kafka, process.env, source));
  if (run !== null && run.task === 'regression') {
    // The scores topic carries class probabilities; a column for the number predicted is not there yet.
    issues.push({
      path: 'task',
      code: 'conflict',
      message:
        'serve scores classifications only: the scores topic has no column for a number predicted; replay a regression instead',
    });
  }
  if (run !== null && kafka !== null && kafka.labels !== null) {
    if (run.inputs.id === null) {
      issues.push({
        path: 'inputs.id',
        code: 'required',
        message: 'late labels (kafka.labels) are joined by id: name the id column',
      });
    }
    if (kafka.scope === 'partition' && kafka.events.topics.length !== 1) {
      issues.push({
        path: 'kafka.events.topics',
        code: 'conflict',
        message: `late labels with scope partition are routed by partition number to the session of one events topic: name one topic, not ${kafka.events.topics.length}`,
      });
    }
  }
  if (run === null || kafka === null || telemetry === null || issues.length > 0) return { issues };
  return { run, kafka, telemetry };
}

async function run(checked: ServeConfig, terminal: Terminal): Promise<number> {
  const { run: config, kafka: settings } = checked;
  const log = createLogger({ level: settings.log.level, pretty: process.stdout.isTTY === true });
  const secrets = readSecrets(settings, process.env, 'environment');
  const kafka = createKafka(settings, secrets, log);
  const journalFile: WriteStream | null =
    settings.journal.file === null ? null : createWriteStream(settings.journal.file, { flags: 'a' });
  const models = new ServeModels(
    config,
    settings,
    eventOptions(config, settings),
    shoalVersion(),
    journalFile,
    checkpointing(settings),
  );
  const store = settings.checkpoint.topic;
  const checkpoints = checkpointing(settings)
    ? new ServeCheckpoints(
        config,
        settings,
        shoalVersion(),
        Date.now(),
        store === null
          ? null
          : new KafkaCheckpointStore(kafka, { topic: store, pipeline: settings.group }, log),
      )
    : null;
  /** Take up the sessions of `keys` from their newest checkpoints; their offsets then say where to read. */
  const takeUp = async (keys: readonly string[]): Promise<void> => {
    if (keys.length === 0) return;
    const taken = await checkpoints!.loadAll(models, keys);
    for (const key of keys) {
      const found = taken.get(key);
      for (const why of found?.refused ?? []) log.warn({ reason: why }, 'checkpoint refused');
      if (found === undefined)
        log.info({ scope: key, store: checkpoints!.place }, 'no checkpoint: starting afresh');
      else
        log.info(
          {
            scope: key,
            checkpoint: found.where,
            offsets: Object.fromEntries(stringOffsets(models.positions(key))),
          },
          'going on from the checkpoint',
        );
    }
  };
  const listen = checked.telemetry.listen;
  const endpoint =
    listen === null
      ? null
      : new TelemetryServer(models.telemetry, {
          ...listen,
          version: shoalVersion(),
          readiness: ['model', 'consumer', 'producer'],
        });
  if (endpoint !== null) {
    await endpoint.start();
    // The model is ready: taken up from its checkpoint above, or built from the first events' schema.
    endpoint.setReady('model', true);
    log.info({ host: endpoint.host, port: endpoint.port }, 'telemetry listening');
  }
  const exactlyOnce = settings.delivery === 'exactly-once';
  // A transaction stays open from one checkpoint to the next: give the broker room before it aborts one
  // (its transaction.max.timeout.ms is 15 minutes by default).
  const producer = new OutputProducer(
    kafka,
    log,
    exactlyOnce ? `${settings.group}-shoal-outputs` : null,
    Math.min(900_000, Math.max(60_000, settings.checkpoint.cadence.everySeconds * 3_000)),
  );
  let refusal: string | null = null;
  /** The outputs of the last batch handled: true once acknowledged (false: the service stopped first). */
  let delivering: Promise<boolean> = Promise.resolve(true);
  // Batches and checkpoints take turns: a checkpoint is cut between two batches, never inside one.
  let turn: Promise<unknown> = Promise.resolve();
  const exclusive = <T>(work: () => Promise<T>): Promise<T> => {
    const mine = turn.then(work);
    turn = mine.catch(() => undefined);
    return mine;
  };
  const position = (stream: string): bigint | undefined =>
    models.positions(models.key(stream)).get(stream) ?? starts.get(stream);
  /** Where each events partition started at the last join, when no session holds it. */
  const starts = new Map<string, bigint>();
  /** Streams whose lag a batch told since the last join. */
  const lagTold = new Set<string>();
  /** Partitions the last join brought whose sessions are being taken up (held until they are). */
  let arriving: string[] = [];
  const hold = new LabelHold(settings.labels?.topic ?? null, (topic) => {
    log.info({ topic }, 'the events read at the join are scored: reading labels');
    consumer.resume(topic);
  });
  const consumer = new EventConsumer(
    kafka,
    settings,
    log,
    async (assignment) => {
      const coming = arriving;
      // State follows partitions: each newly assigned partition's session is taken up from the store
      // before its events (and its labels partition) are fetched. First, while the labels hold has no
      // targets yet and cannot release the labels topic; labels partitions resume with that topic.
      await takeUp([...new Set(coming.map((s) => models.key(s)))].filter((k) => !models.keys().includes(k)));
      for (const stream of coming) {
        const at = models.positions(models.key(stream)).get(stream);
        if (at !== undefined) consumer.seek(stream, at);
        if (!models.isLabels(stream)) consumer.resume(stream);
      }
      models.telemetry.keepLag(assignment.streams);
      const events = assignment.streams.filter((s) => !models.isLabels(s));
      try {
        const lags = await consumer.lag(assignment.streams);
        // A batch handled meanwhile told a newer lag than the group's offsets read before its commit.
        for (const l of lags) {
          if (!lagTold.has(`${l.topic}/${l.partition}`)) models.telemetry.setLag(l.topic, l.partition, l.lag);
        }
        const ends = await consumer.ends(events);
        starts.clear();
        for (const l of lags) {
          const stream = `${l.topic}/${l.partition}`;
          const end = ends.get(stream);
          if (end !== undefined) starts.set(stream, end - BigInt(l.lag));
        }
        hold.until(ends, position);
      } catch (e) {
        log.debug({ error: (e as Error).message }, 'could not read the lag of the assigned partitions');
        // Not knowing the ends, the labels wait no longer than they would for a fresh start.
        hold.until(new Map(), position);
      }
      for (const stream of models.keepOnly(assignment.streams)) {
        checkpoints?.drop(stream);
        log.info({ stream }, 'partition revoked; its session is dropped');
      }
      if (settings.scope === 'global' && !assignment.isLeader && (await consumer.members()) > 1) {
        refusal = refuseSecond(settings);
        void consumer.stop();
      }
      // Partitions added to one topic while running (a rebalance follows) break the co-partitioning.
      const unpaired = await notCoPartitioned(settings, consumer);
      if (unpaired !== null) {
        refusal = unpaired;
        void consumer.stop();
      }
    },
    {
      onMembership: (joined) => endpoint?.setReady('consumer', joined),
      onJoin: (streams) => {
        lagTold.clear();
        const seek = new Map<string, bigint>();
        for (const stream of streams) {
          const at = models.positions(models.key(stream)).get(stream);
          if (at !== undefined) seek.set(stream, at);
        }
        arriving =
          checkpoints === null || settings.scope === 'global'
            ? []
            : streams.filter((s) => !models.keys().includes(models.key(s)));
        return { seek, hold: hold.join(streams), holdStreams: arriving };
      },
      onRebalance: () => {
        if (checkpoints !== null) void exclusive(() => checkpoint('rebalance'));
      },
      commitEachBatch: checkpoints === null,
    },
  );

  /**
   * With exactly-once delivery a failed transaction takes everything since the last checkpoint with it:
   * the service exits, and a restart goes on from the last checkpoint committed.
   */
  const lostTransaction = (e: Error): never => {
    log.error({ error: e.message }, 'the transaction failed; exiting');
    terminal.err(
      `shoal serve: a transaction failed (${e.message}); restart to go on from the last checkpoint committed\n`,
    );
    process.exit(1);
  };

  /**
   * Write the checkpoints due (all with `all`) and commit the offsets they cover (the group never claims
   * more); false when they could not be written (the previous ones stand).
   */
  const checkpoint = async (why: string, all = false): Promise<boolean> => {
    // A checkpoint covers only batches whose outputs were acknowledged: the last one's go out first.
    if (!(await delivering.catch(() => false))) {
      log.error(
        { why },
        'the outputs of the last batch were not acknowledged; the previous checkpoint stands',
      );
      return false;
    }
    try {
      const saved = await checkpoints!.save(
        models,
        Date.now(),
        all,
        exactlyOnce ? (records, offsets) => producer.commit(records, settings.group, offsets) : null,
      );
      if (saved.written.length === 0) return true;
      const committed = exactlyOnce || (await consumer.commit(saved.offsets));
      log.info(
        {
          checkpoints: saved.written,
          why,
          offsets: Object.fromEntries(stringOffsets(saved.offsets)),
          committed,
        },
        'checkpoint written',
      );
      return true;
    } catch (e) {
      log.error(
        { why, error: (e as Error).message },
        'could not write a checkpoint; the previous one stands',
      );
      if (exactlyOnce) {
        // The transaction is lost with everything since the last checkpoint: go on from that one.
        terminal.err(
          `shoal serve: the transaction of a checkpoint failed (${(e as Error).message}); restart to go on from the last one committed\n`,
        );
        process.exit(1);
      }
      return false;
    }
  };

  // The producer first: with exactly-once delivery its connection fences a killed predecessor and aborts
  // the transaction it left open, so the checkpoint read next is the last one committed.
  await producer.connect();
  endpoint?.setReady('producer', true);
  if (checkpoints !== null) {
    await checkpoints.connect();
    if (settings.scope === 'global') await takeUp(['global']);
  }
  await consumer.connect();
  const refused =
    settings.scope === 'global' && !(await alone(consumer, settings))
      ? refuseSecond(settings)
      : await notCoPartitioned(settings, consumer);
  if (refused !== null) {
    terminal.err(`shoal serve: ${refused}\n`);
    await Promise.all([consumer.stop(), producer.stop(), endpoint?.close()]);
    return 2;
  }
  let scored = 0;
  let dead = 0;
  let stopping = false;
  await consumer.start((batch, control) =>
    exclusive(async () => {
      // After the last checkpoint nothing more is handled: what it does not cover is read again later.
      if (stopping) return null;
      const began = performance.now();
      const handled = await models.handle(batch);
      if (handled.scored > 0) endpoint?.batch(handled.scored, (performance.now() - began) / 1000);
      for (const d of handled.dead) {
        log.warn({ code: d.code, topic: d.topic, partition: d.partition, offset: d.offset }, d.reason);
      }
      // The outputs go out while the next batch is handled, after those of the batch before.
      const previous = delivering;
      const acknowledged = (async () => {
        if (!(await previous)) return false;
        // While outputs cannot be delivered: stop fetching, and keep the group membership alive.
        const delivered = await producer
          .deliver(handled.outputs, async () => {
            endpoint?.setReady('producer', false);
            control.pause();
            await control.heartbeat().catch(() => undefined);
          })
          .catch((e: Error) => (exactlyOnce ? lostTransaction(e) : Promise.reject(e)));
        control.resume();
        if (!delivered) return false;
        endpoint?.setReady('producer', true);
        models.telemetry.setLag(batch.topic, batch.partition, batch.lag);
        lagTold.add(`${batch.topic}/${batch.partition}`);
        scored += handled.scored;
        dead += handled.dead.length;
        if (batch.topic !== settings.labels?.topic) hold.check(position);
        if (checkpoints !== null) {
          // Dead letters count too: their outputs and offsets wait for a checkpoint like any other.
          checkpoints.read(
            models.key(`${batch.topic}/${batch.partition}`),
            handled.rows + handled.dead.length,
          );
          // Between two batches, like every checkpoint.
          if (checkpoints.due(Date.now())) void exclusive(() => checkpoint('cadence'));
        }
        return true;
      })();
      // Awaited by the next batch, the consumer and checkpoints; never an unhandled rejection meanwhile.
      acknowledged.catch(() => undefined);
      delivering = acknowledged;
      return { acknowledged };
    }),
  );
  log.info({ group: settings.group, topics: settings.events.topics, scope: settings.scope }, 'serving');
  const ticker =
    checkpoints === null
      ? null
      : setInterval(
          () => {
            if (!stopping && checkpoints.due(Date.now())) void exclusive(() => checkpoint('time'));
          },
          Math.max(100, settings.checkpoint.cadence.everySeconds * 250),
        );
  ticker?.unref();

  const signalled = new Promise<string>((done) => {
    process.once('SIGTERM', () => done('SIGTERM'));
    process.once('SIGINT', () => done('SIGINT'));
  });
  const ended = await Promise.race([signalled.then((s) => ({ signal: s })), consumer.finished]);
  if (ticker !== null) clearInterval(ticker);
  if ('crashed' in ended && ended.crashed) {
    log.error({ reason: ended.message }, 'the consumer crashed; exiting');
    terminal.err(`shoal serve: ${ended.message}\n`);
    await Promise.all([consumer.stop(), producer.stop(), endpoint?.close()]).catch(() => undefined);
    exitSoon(1);
    return 1;
  }
  if (refusal !== null) {
    terminal.err(`shoal serve: ${refusal}\n`);
    await Promise.all([consumer.stop(), producer.stop(), endpoint?.close()]).catch(() => undefined);
    return 2;
  }
  log.info(
    { reason: 'signal' in ended ? ended.signal : ended.message },
    'stopping: finishing the batch in flight',
  );
  const deadline = setTimeout(() => {
    log.error({ shutdownMs: settings.shutdownMs }, 'shutdown took longer than shutdownMs; exiting');
    process.exit(1);
  }, settings.shutdownMs);
  deadline.unref();
  let saved = true;
  if (checkpoints !== null) {
    // The last checkpoints, after the batch in flight, while the group membership can still commit.
    saved = await exclusive(async () => {
      stopping = true;
      return checkpoint('shutdown', true);
    });
    if (!saved) terminal.err('shoal serve: could not write the final checkpoint (see the log)\n');
  }
  await consumer.stop();
  await producer.deliver(await models.finish(), async () => undefined);
  if (exactlyOnce) await producer.commit([], settings.group, null);
  if (journalFile !== null) {
    journalFile.end();
    await once(journalFile, 'finish');
  }
  await producer.stop();
  await checkpoints?.disconnect();
  await endpoint?.close();
  clearTimeout(deadline);
  log.info({ scored, deadLetters: dead }, 'stopped');
  exitSoon(saved ? 0 : 1);
  return saved ? 0 : 1;
}

/** Offsets as decimal text, for logs. */
function stringOffsets(offsets: ReadonlyMap<string, bigint>): [string, string][] {
  return [...offsets].map(([stream, next]) => [stream, next.toString()]);
}

/**
 * Whether the group is free for a `global` instance. A member that crashed stays in the group until its
 * session times out, so a restart waits that long for it to leave before it refuses.
 */
async function alone(consumer: EventConsumer, settings: KafkaSettings): Promise<boolean> {
  const until = performance.now() + settings.sessionTimeoutMs + settings.maxWaitMs;
  for (;;) {
    if ((await consumer.members()) === 0) return true;
    if (performance.now() > until) return false;
    await new Promise((done) => setTimeout(done, 250));
  }
}

/**
 * Everything is flushed, committed and disconnected, but after a broker outage kafkajs can keep a
 * reconnect timer or socket alive (measured: the process stayed up after a broker stop and start), and a
 * service told to stop must stop. The timer is unref'd, so it only fires if something else holds the
 * process open.
 */
function exitSoon(code: number): void {
  setTimeout(() => process.exit(code), 2_000).unref();
}

/**
 * The events decoder's options: replay's, except that the label column may be absent from the events
 * when it is the default one, or when labels come on the labels topic (`kafka.labels`); a label column
 * named otherwise must exist.
 */
export function eventOptions(config: RunConfig, settings: KafkaSettings): FrameOptions {
  const { label, ...rest } = frameOptions(config);
  if (label === DEFAULT_LABEL || label === undefined) return rest;
  return settings.labels === null ? { label, ...rest } : { label, labelOptional: true, ...rest };
}

/**
 * With scope `partition` and a labels topic, the labels of events partition p are read from labels
 * partition p, by the instance that holds p's session: the labels topic must have as many partitions as
 * the events topic (and each label be written to its event's partition number — by the same key and
 * partitioner, or explicitly). Returns the refusal, or null when they match or the check does not apply.
 */
async function notCoPartitioned(settings: KafkaSettings, consumer: EventConsumer): Promise<string | null> {
  if (settings.scope !== 'partition' || settings.labels === null) return null;
  const events = settings.events.topics[0]!;
  const labels = settings.labels.topic;
  let counts: Map<string, number>;
  try {
    counts = await consumer.partitionCounts([events, labels]);
  } catch (e) {
    return `cannot read the partition counts of ${JSON.stringify(events)} and ${JSON.stringify(labels)} (${(e as Error).message}); create both topics, with the same partition count`;
  }
  const e = counts.get(events);
  const l = counts.get(labels);
  if (e === l) return null;
  return `kafka.labels.topic ${JSON.stringify(labels)} has ${l ?? 'no'} partitions and the events topic ${JSON.stringify(events)} has ${e ?? 'no'}: with scope partition, labels are joined in the session of the events partition with the same number, so the two topics must have the same partition count (and each label be written to its event's partition number). Repartition one, or use scope global.`;
}

function refuseSecond(settings: KafkaSettings): string {
  return `consumer group ${JSON.stringify(settings.group)} already has a member, and scope is global: a second instance would split the events between two models. Stop the other instance, use another group, or set kafka.scope: partition to scale out by partition.`;
}
