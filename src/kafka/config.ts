import { ConfigError, type ConfigIssue, checkOptions, defaultsOf, resolveOptions } from '../core/index.js';
import { CHECKPOINT_CADENCE_OPTIONS, type CheckpointCadence } from '../pipeline/index.js';
import { LOG_LEVELS, type LogLevelName } from './log.js';

/**
 * The `kafka:` section of `shoal.yaml` for `shoal serve`: where the events come from and where scores,
 * dead letters and the journal go. Every problem is collected and reported with its path
 * (`kafka.sasl.mechanism: …`) in one `ConfigError`. Secrets are never values of the file: the file names
 * environment variables (`passwordEnv`), read when the service connects.
 *
 * @example
 * kafka:
 *   brokers: [kafka-1:9092]
 *   group: shoal-legs
 *   events: { topics: [legs] }
 *   scores: { topic: legs-scores }
 *   deadLetters: { topic: legs-dead }
 */

export type Scope = 'global' | 'partition';
/**
 * `at-least-once`: outputs are sent as each batch is handled and offsets committed after them (a crash
 * can repeat outputs; scores carry id and model epoch so consumers can drop repeats). `exactly-once`:
 * outputs, checkpoint and offsets go in one Kafka transaction per checkpoint; `read_committed`
 * consumers see each output once.
 */
export type Delivery = 'at-least-once' | 'exactly-once';
export const DELIVERIES: readonly Delivery[] = ['at-least-once', 'exactly-once'];
export type EventFormat = 'arrow' | 'ndjson';
export type SaslMechanism = 'plain' | 'scram-sha-256' | 'scram-sha-512';
export const SCOPES: readonly Scope[] = ['global', 'partition'];
export const EVENT_FORMATS: readonly EventFormat[] = ['arrow', 'ndjson'];
export const SASL_MECHANISMS: readonly SaslMechanism[] = ['plain', 'scram-sha-256', 'scram-sha-512'];

export interface KafkaSettings {
  readonly brokers: readonly string[];
  readonly clientId: string;
  /** The consumer group: instances with the same group share the events topics' partitions. */
  readonly group: string;
  /** `global`: one model for every partition (one instance per group); `partition`: one per partition. */
  readonly scope: Scope;
  readonly delivery: Delivery;
  readonly events: {
    readonly topics: readonly string[];
    /** The format of a message without a `content-type` header. */
    readonly format: EventFormat;
    /** Where a group without committed offsets starts: the oldest message (true) or new ones only. */
    readonly fromBeginning: boolean;
    /** A message larger than this goes to the dead letters unread and without its value (bytes; 1 MiB). */
    readonly maxMessageBytes: number;
  };
  /** Late labels (id, label, optional time); null when labels only come inline. */
  readonly labels: { readonly topic: string } | null;
  readonly scores: { readonly topic: string };
  readonly deadLetters: { readonly topic: string };
  readonly journal: { readonly topic: string | null; readonly file: string | null };
  /**
   * Where and how often each session's run checkpoint is written, with the offsets it covers: to files
   * under `dir` (scope `global`: the directory itself; `partition`: a folder per partition in it) or to
   * the compacted `topic`; neither: no checkpoints, the models live in memory only.
   */
  readonly checkpoint: {
    readonly dir: string | null;
    readonly topic: string | null;
    readonly cadence: CheckpointCadence;
  };
  /** How long SIGTERM may take: finish the batch in flight, flush, commit, exit (ms). */
  readonly shutdownMs: number;
  /** The longest the consumer waits for data in a fetch (ms); also how quickly it joins a rebalance. */
  readonly maxWaitMs: number;
  readonly sessionTimeoutMs: number;
  readonly tls: TlsSettings | null;
  readonly sasl: SaslSettings | null;
  readonly log: { readonly level: LogLevelName };
}

export interface TlsSettings {
  readonly rejectUnauthorized: boolean;
  /** Environment variables holding PEM text (CA bundle, client certificate and key), or null. */
  readonly caEnv: string | null;
  readonly certEnv: string | null;
  readonly keyEnv: string | null;
}

export interface SaslSettings {
  readonly mechanism: SaslMechanism;
  readonly username: string;
  /** The environment variable that holds the password. */
  readonly passwordEnv: string;
}

const TOP = [
  'brokers',
  'clientId',
  'group',
  'scope',
  'delivery',
  'events',
  'labels',
  'scores',
  'deadLetters',
  'journal',
  'checkpoint',
  'shutdownMs',
  'maxWaitMs',
  'sessionTimeoutMs',
  'tls',
  'sasl',
  'log',
];

/** Check the `kafka` section (`raw`), naming every problem under `path`. */
export function resolveKafkaSettings(raw: unknown, source: string, path = 'kafka'): KafkaSettings {
  const c = new Issues();
  const top = c.mapping(path, raw, TOP, true);
  const at = (key: string): string => `${path}.${key}`;
  const brokers = c.strings(at('brokers'), top.brokers, true).filter((b, i) => {
    if (/^[^\s:]+:\d{1,5}$/.test(b)) return true;
    c.fail(`${at('brokers')}[${i}]`, `expected host:port, got ${JSON.stringify(b)}`);
    return false;
  });
  const events = c.mapping(
    at('events'),
    top.events,
    ['topics', 'format', 'fromBeginning', 'maxMessageBytes'],
    true,
  );
  const labels = c.mapping(at('labels'), top.labels, ['topic'], false);
  const scores = c.mapping(at('scores'), top.scores, ['topic'], true);
  const dead = c.mapping(at('deadLetters'), top.deadLetters, ['topic'], true);
  const journal = c.mapping(at('journal'), top.journal, ['topic', 'file'], false);
  const checkpoint = c.mapping(
    at('checkpoint'),
    top.checkpoint,
    ['dir', 'topic', ...Object.keys(CHECKPOINT_CADENCE_OPTIONS)],
    false,
  );
  const { dir: _dir, topic: _topic, ...cadence } = checkpoint;
  const cadenceIssues: ConfigIssue[] = [];
  checkOptions(CHECKPOINT_CADENCE_OPTIONS, cadence, at('checkpoint'), cadenceIssues, []);
  // Unknown keys were named by the mapping check already.
  for (const i of cadenceIssues) if (i.code !== 'unknown-setting') c.issues.push(i);
  if (checkpoint.dir !== undefined && checkpoint.topic !== undefined) {
    c.fail(at('checkpoint'), 'choose one store: dir (files) or topic (a compacted Kafka topic)', 'conflict');
  }
  const log = c.mapping(at('log'), top.log, ['level'], false);
  const settings: KafkaSettings = {
    brokers,
    clientId: c.text(at('clientId'), top.clientId, 'shoal'),
    group: c.text(at('group'), top.group, null),
    scope: c.choice(at('scope'), top.scope, SCOPES, 'global'),
    delivery: c.choice(at('delivery'), top.delivery, DELIVERIES, 'at-least-once'),
    events: {
      topics: c.strings(`${at('events')}.topics`, events.topics, true),
      format: c.choice(`${at('events')}.format`, events.format, EVENT_FORMATS, 'arrow'),
      fromBeginning: c.flag(`${at('events')}.fromBeginning`, events.fromBeginning, true),
      maxMessageBytes: c.count(`${at('events')}.maxMessageBytes`, events.maxMessageBytes, 1024 * 1024),
    },
    labels: top.labels === undefined ? null : { topic: c.text(`${at('labels')}.topic`, labels.topic, null) },
    scores: { topic: c.text(`${at('scores')}.topic`, scores.topic, null) },
    deadLetters: { topic: c.text(`${at('deadLetters')}.topic`, dead.topic, null) },
    journal: {
      topic: journal.topic === undefined ? null : c.text(`${at('journal')}.topic`, journal.topic, null),
      file: journal.file === undefined ? null : c.text(`${at('journal')}.file`, journal.file, null),
    },
    checkpoint: {
      dir: checkpoint.dir === undefined ? null : c.text(`${at('checkpoint')}.dir`, checkpoint.dir, null),
      topic:
        checkpoint.topic === undefined ? null : c.text(`${at('checkpoint')}.topic`, checkpoint.topic, null),
      cadence:
        cadenceIssues.length > 0
          ? defaultsOf(CHECKPOINT_CADENCE_OPTIONS)
          : resolveOptions('kafka.checkpoint', CHECKPOINT_CADENCE_OPTIONS, cadence, []),
    },
    shutdownMs: c.count(at('shutdownMs'), top.shutdownMs, 30_000),
    maxWaitMs: c.count(at('maxWaitMs'), top.maxWaitMs, 500),
    sessionTimeoutMs: c.count(at('sessionTimeoutMs'), top.sessionTimeoutMs, 10_000),
    tls: tls(c, at('tls'), top.tls),
    sasl: sasl(c, at('sasl'), top.sasl),
    log: { level: c.choice(`${at('log')}.level`, log.level, LOG_LEVELS, 'info') },
  };
  if (settings.delivery === 'exactly-once') {
    // The checkpoint must commit in the same transaction as the outputs and offsets it covers.
    if (settings.checkpoint.topic === null) {
      c.fail(
        at('delivery'),
        'exactly-once needs the Kafka checkpoint store (kafka.checkpoint.topic): the checkpoint goes in the transaction with the outputs and offsets it covers',
        'conflict',
      );
    }
    if (settings.scope !== 'global') {
      c.fail(at('delivery'), 'exactly-once is offered with scope global only', 'conflict');
    }
  }
  if (c.issues.length > 0) throw new ConfigError(source, c.issues);
  return settings;
}

function tls(c: Issues, path: string, raw: unknown): TlsSettings | null {
  if (raw === undefined || raw === false) return null;
  if (raw === true) return { rejectUnauthorized: true, caEnv: null, certEnv: null, keyEnv: null };
  const m = c.mapping(path, raw, ['rejectUnauthorized', 'caEnv', 'certEnv', 'keyEnv'], false);
  const env = (key: string): string | null =>
    m[key] === undefined ? null : c.envName(`${path}.${key}`, m[key]);
  return {
    rejectUnauthorized: c.flag(`${path}.rejectUnauthorized`, m.rejectUnauthorized, true),
    caEnv: env('caEnv'),
    certEnv: env('certEnv'),
    keyEnv: env('keyEnv'),
  };
}

function sasl(c: Issues, path: string, raw: unknown): SaslSettings | null {
  if (raw === undefined) return null;
  const m = c.mapping(path, raw, ['mechanism', 'username', 'passwordEnv'], true);
  if ('password' in m)
    c.fail(`${path}.password`, 'secrets are not read from the file; name a variable in passwordEnv');
  return {
    mechanism: c.choice(`${path}.mechanism`, m.mechanism, SASL_MECHANISMS, null),
    username: c.text(`${path}.username`, m.username, null),
    passwordEnv: c.envName(`${path}.passwordEnv`, m.passwordEnv),
  };
}

/**
 * The secrets the settings name, read from `env`; every variable that is not set is one issue.
 * Returned values are only handed to kafkajs, never logged or printed.
 */
export function readSecrets(
  settings: KafkaSettings,
  env: Readonly<Record<string, string | undefined>>,
  source: string,
): Secrets {
  const issues: ConfigIssue[] = [];
  const read = (path: string, name: string | null): string | null => {
    if (name === null) return null;
    const value = env[name];
    if (value === undefined || value === '') {
      issues.push({ path, code: 'required', message: `the environment variable ${name} is not set` });
      return null;
    }
    return value;
  };
  const secrets: Secrets = {
    password: read('kafka.sasl.passwordEnv', settings.sasl?.passwordEnv ?? null),
    ca: read('kafka.tls.caEnv', settings.tls?.caEnv ?? null),
    cert: read('kafka.tls.certEnv', settings.tls?.certEnv ?? null),
    key: read('kafka.tls.keyEnv', settings.tls?.keyEnv ?? null),
  };
  if (issues.length > 0) throw new ConfigError(source, issues);
  return secrets;
}

export interface Secrets {
  readonly password: string | null;
  readonly ca: string | null;
  readonly cert: string | null;
  readonly key: string | null;
}

/** Collects every problem of one section before they are reported together. */
class Issues {
  readonly issues: ConfigIssue[] = [];

  fail(path: string, message: string, code: ConfigIssue['code'] = 'wrong-type'): void {
    this.issues.push({ path, code, message });
  }

  mapping(path: string, raw: unknown, keys: readonly string[], required: boolean): Record<string, unknown> {
    if (raw === undefined || raw === null) {
      if (required) this.fail(path, 'is required');
      return {};
    }
    if (typeof raw !== 'object' || Array.isArray(raw)) {
      this.fail(path, `must be a mapping, got ${show(raw)}`);
      return {};
    }
    for (const key of Object.keys(raw)) {
      if (!keys.includes(key) && key !== 'password')
        this.fail(`${path}.${key}`, `unknown setting; expected one of ${keys.join(', ')}`);
    }
    return raw as Record<string, unknown>;
  }

  text(path: string, raw: unknown, fallback: string | null): string {
    if (raw === undefined && fallback !== null) return fallback;
    if (typeof raw === 'string' && raw.trim() !== '') return raw;
    this.fail(path, raw === undefined ? 'is required' : `must be a non-empty string, got ${show(raw)}`);
    return '';
  }

  strings(path: string, raw: unknown, required: boolean): string[] {
    if (raw === undefined) {
      if (required) this.fail(path, 'is required');
      return [];
    }
    const list = typeof raw === 'string' ? [raw] : raw;
    if (!Array.isArray(list) || list.length === 0 || !list.every((s) => typeof s === 'string' && s !== '')) {
      this.fail(path, `must be a list of non-empty strings, got ${show(raw)}`);
      return [];
    }
    return list as string[];
  }

  choice<T extends string>(path: string, raw: unknown, allowed: readonly T[], fallback: T | null): T {
    if (raw === undefined && fallback !== null) return fallback;
    if (typeof raw === 'string' && (allowed as readonly string[]).includes(raw)) return raw as T;
    this.fail(path, `must be one of ${allowed.join(', ')}, got ${show(raw)}`);
    return allowed[0]!;
  }

  flag(path: string, raw: unknown, fallback: boolean): boolean {
    if (raw === undefined) return fallback;
    if (typeof raw === 'boolean') return raw;
    this.fail(path, `must be true or false, got ${show(raw)}`);
    return fallback;
  }

  count(path: string, raw: unknown, fallback: number): number {
    if (raw === undefined) return fallback;
    if (typeof raw === 'number' && Number.isInteger(raw) && raw > 0) return raw;
    this.fail(path, `must be a positive whole number, got ${show(raw)}`);
    return fallback;
  }

  envName(path: string, raw: unknown): string {
    if (typeof raw === 'string' && /^[A-Za-z_][A-Za-z0-9_]*$/.test(raw)) return raw;
    this.fail(path, `must name an environment variable (letters, digits, _), got ${show(raw)}`);
    return '';
  }
}

function show(value: unknown): string {
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'a list';
  if (typeof value === 'object') return 'a mapping';
  return JSON.stringify(value);
}
