import { once } from 'node:events';
import { createWriteStream, type WriteStream } from 'node:fs';
import { join } from 'node:path';
import { stringify } from 'yaml';
import { ConfigError, type ConfigIssue, ShoalError } from '../core/index.js';
import { FileCheckpointStore } from '../files/index.js';
import { DEFAULT_LABEL, type FrameOptions } from '../frames/index.js';
import {
  createKafka,
  createLogger,
  EventConsumer,
  type KafkaSettings,
  OutputProducer,
  readSecrets,
  resolveKafkaSettings,
} from '../kafka/index.js';
import { type RunConfig, resolveConfig } from '../pipeline/index.js';
import { parseListen, TelemetryServer } from '../telemetry/index.js';
import { parse, positionals, text } from './args.js';
import { IssueList, readConfigFile } from './config-file.js';
import { frameOptions } from './replay.js';
import { ServeModels } from './serve-run.js';
import type { Terminal } from './terminal.js';
import { shoalVersion } from './version.js';

export const SERVE_HELP = `shoal serve --config shoal.yaml [--check]

Score a Kafka events topic live: a consumer group reads Arrow IPC or NDJSON events, every event is
scored (scores go to the scores topic as Arrow IPC), inline labels judge and train the ensemble, and
messages that cannot be used go to the dead-letter topic with their reason. Offsets are committed only
after a batch's outputs are acknowledged. SIGTERM or SIGINT: finish the batch in flight, flush, commit,
exit 0.

Options:
  --config FILE   shoal.yaml: the ensemble, evaluation and inputs settings, a kafka: section, and
                  optionally telemetry: { listen: HOST:PORT } for /metrics, /healthz, /readyz, /status
  --check         print the effective configuration, or every problem with its path, and exit`;

export async function serve(args: readonly string[], terminal: Terminal): Promise<number> {
  const parsed = parse('serve', args, { config: { type: 'string' }, check: { type: 'boolean' } });
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
  const raw = await readConfigFile(path);
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
    terminal.out(stringify({ ...checked.run, kafka: checked.kafka, telemetry: checked.telemetry }));
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
    if (kafka.scope === 'partition') {
      issues.push({
        path: 'kafka.labels',
        code: 'conflict',
        message:
          'late labels need scope global: with scope partition a label could reach an instance that does not hold its prediction',
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
  );
  const listen = checked.telemetry.listen;
  const endpoint =
    listen === null
      ? null
      : new TelemetryServer(models.telemetry, {
          ...listen,
          version: shoalVersion(),
          readiness: ['model', 'consumer'],
        });
  if (endpoint !== null) {
    await endpoint.start();
    // Serve has no model to load: each session builds its model from its first events' schema.
    endpoint.setReady('model', true);
    log.info({ host: endpoint.host, port: endpoint.port }, 'telemetry listening');
  }
  const producer = new OutputProducer(kafka, log);
  let refusal: string | null = null;
  const consumer = new EventConsumer(
    kafka,
    settings,
    log,
    async (assignment) => {
      models.telemetry.keepLag(assignment.streams);
      if (endpoint !== null) {
        try {
          for (const l of await consumer.lag(assignment.streams))
            models.telemetry.setLag(l.topic, l.partition, l.lag);
        } catch (e) {
          log.debug({ error: (e as Error).message }, 'could not read the lag of the assigned partitions');
        }
      }
      for (const stream of models.keepOnly(assignment.streams)) {
        log.info({ stream }, 'partition revoked; its session is dropped (its outputs were committed)');
      }
      if (settings.scope === 'global' && !assignment.isLeader && (await consumer.members()) > 1) {
        refusal = refuseSecond(settings);
        void consumer.stop();
      }
    },
    (joined) => endpoint?.setReady('consumer', joined),
  );
  await producer.connect();
  await consumer.connect();
  if (settings.scope === 'global' && (await consumer.members()) > 0) {
    terminal.err(`shoal serve: ${refuseSecond(settings)}\n`);
    await Promise.all([consumer.stop(), producer.stop(), endpoint?.close()]);
    return 2;
  }
  let scored = 0;
  let dead = 0;
  await consumer.start(async (batch, control) => {
    const began = performance.now();
    const handled = models.handle(batch);
    if (handled.scored > 0) endpoint?.batch(handled.scored, (performance.now() - began) / 1000);
    for (const d of handled.dead) {
      log.warn({ code: d.code, topic: d.topic, partition: d.partition, offset: d.offset }, d.reason);
    }
    // While outputs cannot be delivered: stop fetching, and keep the group membership alive.
    const delivered = await producer.deliver(handled.outputs, async () => {
      control.pause();
      await control.heartbeat().catch(() => undefined);
    });
    control.resume();
    if (delivered) {
      models.telemetry.setLag(batch.topic, batch.partition, batch.lag);
      scored += handled.scored;
      dead += handled.dead.length;
    }
    return delivered;
  });
  log.info({ group: settings.group, topics: settings.events.topics, scope: settings.scope }, 'serving');

  const signalled = new Promise<string>((done) => {
    process.once('SIGTERM', () => done('SIGTERM'));
    process.once('SIGINT', () => done('SIGINT'));
  });
  const ended = await Promise.race([signalled.then((s) => ({ signal: s })), consumer.finished]);
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
  await consumer.stop();
  let saved = true;
  if (settings.checkpoint.dir !== null) {
    try {
      for (const where of await saveCheckpoints(models, settings.checkpoint.dir)) {
        log.info({ checkpoint: where }, 'final checkpoint written');
      }
    } catch (e) {
      saved = false;
      log.error({ error: (e as Error).message }, 'could not write the final checkpoint');
      terminal.err(`shoal serve: could not write the final checkpoint: ${(e as Error).message}\n`);
    }
  }
  await producer.deliver(models.finish(), async () => undefined);
  if (journalFile !== null) {
    journalFile.end();
    await once(journalFile, 'finish');
  }
  await producer.stop();
  await endpoint?.close();
  clearTimeout(deadline);
  log.info({ scored, deadLetters: dead }, 'stopped');
  exitSoon(saved ? 0 : 1);
  return saved ? 0 : 1;
}

/**
 * Write each session's run checkpoint as the service stops (taken before the summary is written, as
 * `replay` takes its last one): into `dir` with scope `global`, into `dir/<topic>-<partition>` for each
 * partition's session with scope `partition`. Returns the files written.
 */
async function saveCheckpoints(models: ServeModels, dir: string): Promise<string[]> {
  const written: string[] = [];
  for (const { key, checkpoint } of models.checkpoints(new Date().toISOString())) {
    const store = new FileCheckpointStore(key === 'global' ? dir : join(dir, key.replace('/', '-')));
    written.push(await store.save(checkpoint));
  }
  return written;
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
function eventOptions(config: RunConfig, settings: KafkaSettings): FrameOptions {
  const { label, ...rest } = frameOptions(config);
  if (label === DEFAULT_LABEL || label === undefined) return rest;
  return settings.labels === null ? { label, ...rest } : { label, labelOptional: true, ...rest };
}

function refuseSecond(settings: KafkaSettings): string {
  return `consumer group ${JSON.stringify(settings.group)} already has a member, and scope is global: a second instance would split the events between two models. Stop the other instance, use another group, or set kafka.scope: partition to scale out by partition.`;
}
