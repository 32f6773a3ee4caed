import { type ChildProcess, spawn } from 'node:child_process';
import { dirname, join, resolve } from 'node:path';
import { Writable } from 'node:stream';
import { fileURLToPath } from 'node:url';
import { tableFromIPC } from 'apache-arrow';
import type { Kafka, KafkaMessage, Message } from 'kafkajs';
import type { Logger } from 'pino';
import { createLogger } from '../../src/kafka/index.js';
import { kafkajsModule } from '../../src/kafka/kafkajs.js';
import { uniqueName } from './kafka-names.js';

/**
 * Helpers for tests that run `shoal serve` against the test broker: topics, producing events, reading
 * a topic back, and the service as a real child process (so that signals and exit codes are real).
 */

const repo = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');

/** A kafkajs client of the tests, loaded as Shoal loads it (with Shoal's CRC-32C when it loads first). */
export function client(brokers: string): Kafka {
  const { Kafka, logLevel } = kafkajsModule();
  return new Kafka({ clientId: 'shoal-test', brokers: brokers.split(','), logLevel: logLevel.NOTHING });
}

export async function createTopics(brokers: string, topics: Record<string, number>): Promise<void> {
  const admin = client(brokers).admin();
  await admin.connect();
  await admin.createTopics({
    topics: Object.entries(topics).map(([topic, numPartitions]) => ({ topic, numPartitions })),
    waitForLeaders: true,
  });
  await admin.disconnect();
}

export async function produce(brokers: string, topic: string, messages: Message[]): Promise<void> {
  const producer = client(brokers).producer();
  await producer.connect();
  for (let i = 0; i < messages.length; i += 10) {
    await producer.send({ topic, messages: messages.slice(i, i + 10), acks: -1 });
  }
  await producer.disconnect();
}

/** Read a topic from the start until `done(messages)` says enough (or the timeout passes). */
export async function readTopic(
  brokers: string,
  topic: string,
  done: (seen: readonly KafkaMessage[]) => boolean,
  timeoutMs = 120_000,
): Promise<KafkaMessage[]> {
  const consumer = client(brokers).consumer({ groupId: uniqueName('reader'), maxWaitTimeInMs: 500 });
  await consumer.connect();
  await consumer.subscribe({ topic, fromBeginning: true });
  const seen: KafkaMessage[] = [];
  try {
    await new Promise<void>((finish, fail) => {
      const timer = setTimeout(
        () => fail(new Error(`${topic}: only ${seen.length} messages after ${timeoutMs} ms`)),
        timeoutMs,
      );
      void consumer.run({
        eachMessage: async ({ message }) => {
          seen.push(message);
          if (done(seen)) {
            clearTimeout(timer);
            finish();
          }
        },
      });
    });
  } finally {
    await consumer.disconnect();
  }
  return seen;
}

/** The rows of scores messages (Arrow IPC streams), as plain objects. */
export function scoreRows(messages: readonly KafkaMessage[]): Record<string, unknown>[] {
  return messages.flatMap((m) =>
    tableFromIPC(m.value!)
      .toArray()
      .map((r) => r.toJSON() as Record<string, unknown>),
  );
}

export function countScoreRows(messages: readonly KafkaMessage[]): number {
  let n = 0;
  for (const m of messages) n += tableFromIPC(m.value!).numRows;
  return n;
}

const running = new Set<ChildProcess>();

/** SIGKILL every `serve` child a test left running (after a failure), so none outlives the test. */
export function killServes(): void {
  for (const child of running) child.kill('SIGKILL');
  running.clear();
}

/** `shoal serve` as a child process; its stdout (the JSON log) and stderr are kept. */
export class ServeProcess {
  stdout = '';
  stderr = '';
  readonly exited: Promise<number | null>;
  private readonly child: ChildProcess;

  constructor(config: string, env: Record<string, string> = {}, args: string[] = []) {
    this.child = spawn(
      process.execPath,
      [join(repo, 'bin', 'shoal.js'), 'serve', '--config', config, ...args],
      { env: { ...process.env, ...env }, stdio: ['ignore', 'pipe', 'pipe'] },
    );
    this.child.stdout!.on('data', (c: Buffer) => {
      this.stdout += c.toString('utf8');
    });
    this.child.stderr!.on('data', (c: Buffer) => {
      this.stderr += c.toString('utf8');
    });
    running.add(this.child);
    this.exited = new Promise((done) =>
      this.child.once('exit', (code) => {
        running.delete(this.child);
        done(code);
      }),
    );
  }

  /** Log records (JSON lines of stdout). */
  logs(): Record<string, unknown>[] {
    return this.stdout
      .split('\n')
      .filter((l) => l.startsWith('{'))
      .map((l) => JSON.parse(l) as Record<string, unknown>);
  }

  /** Resolves once a log record's message is `msg`. */
  async waitFor(msg: string, timeoutMs = 60_000): Promise<void> {
    const began = performance.now();
    while (!this.logs().some((l) => l.msg === msg)) {
      if (performance.now() - began > timeoutMs) {
        throw new Error(`serve never logged ${JSON.stringify(msg)}:\n${this.stdout}\n${this.stderr}`);
      }
      await new Promise((d) => setTimeout(d, 100));
    }
  }

  signal(name: NodeJS.Signals): void {
    this.child.kill(name);
  }

  get pid(): number | undefined {
    return this.child.pid;
  }
}

/**
 * A reader that stays subscribed and counts score rows and the distinct ids scored, for tests that wait
 * round after round (a restarted service scores some events again: `rows` counts repeats, `ids` not).
 */
export class ScoreCounter {
  rows = 0;
  readonly ids = new Set<string>();
  private readonly consumer;

  private constructor(brokers: string) {
    this.consumer = client(brokers).consumer({ groupId: uniqueName('counter'), maxWaitTimeInMs: 200 });
  }

  static async start(brokers: string, topic: string): Promise<ScoreCounter> {
    const counter = new ScoreCounter(brokers);
    await counter.consumer.connect();
    await counter.consumer.subscribe({ topic, fromBeginning: true });
    void counter.consumer.run({
      eachMessage: async ({ message }) => {
        const table = tableFromIPC(message.value!);
        counter.rows += table.numRows;
        const ids = table.getChild('id');
        if (ids !== null) for (const id of ids) counter.ids.add(String(id));
      },
    });
    return counter;
  }

  async reach(rows: number, timeoutMs = 60_000): Promise<void> {
    const began = performance.now();
    while (this.rows < rows) {
      if (performance.now() - began > timeoutMs) throw new Error(`only ${this.rows} of ${rows} score rows`);
      await new Promise((d) => setTimeout(d, 50));
    }
  }

  /** Resolves once `ids` distinct ids were scored, or as soon as `stop()` says true (checked often). */
  async reachIds(ids: number, stop: () => boolean = () => false, timeoutMs = 120_000): Promise<void> {
    const began = performance.now();
    while (this.ids.size < ids && !stop()) {
      if (performance.now() - began > timeoutMs)
        throw new Error(`only ${this.ids.size} of ${ids} ids scored`);
      await new Promise((d) => setTimeout(d, 20));
    }
  }

  stop(): Promise<void> {
    return this.consumer.disconnect();
  }
}

/**
 * Wait until `group` has committed at least the given next offset of each topic: a number for partition
 * 0, a list for partitions 0, 1, ….
 */
export async function waitCommitted(
  brokers: string,
  group: string,
  want: Readonly<Record<string, number | readonly number[]>>,
  timeoutMs = 120_000,
): Promise<void> {
  const admin = client(brokers).admin();
  await admin.connect();
  const began = performance.now();
  try {
    for (;;) {
      const got: Record<string, number[]> = {};
      for (const topic of Object.keys(want)) {
        const [offsets] = await admin.fetchOffsets({ groupId: group, topics: [topic] });
        got[topic] = [...(offsets?.partitions ?? [])]
          .sort((a, b) => a.partition - b.partition)
          .map((p) => Number(p.offset));
      }
      const reached = Object.entries(want).every(([topic, offsets]) =>
        (typeof offsets === 'number' ? [offsets] : offsets).every((o, p) => (got[topic]![p] ?? -1) >= o),
      );
      if (reached) return;
      if (performance.now() - began > timeoutMs) {
        throw new Error(`${group} committed ${JSON.stringify(got)}, expected ${JSON.stringify(want)}`);
      }
      await new Promise((d) => setTimeout(d, 200));
    }
  } finally {
    await admin.disconnect();
  }
}

/** Wait until `group` has no members (a killed member leaves once its session times out). */
export async function waitGroupEmpty(brokers: string, group: string, timeoutMs = 60_000): Promise<void> {
  const admin = client(brokers).admin();
  await admin.connect();
  const began = performance.now();
  try {
    for (;;) {
      const { groups } = await admin.describeGroups([group]);
      if ((groups[0]?.members.length ?? 0) === 0) return;
      if (performance.now() - began > timeoutMs) throw new Error(`${group} still has members`);
      await new Promise((d) => setTimeout(d, 200));
    }
  } finally {
    await admin.disconnect();
  }
}

/** A logger for Shoal's Kafka adapters used in a test: its lines are kept in memory, never printed. */
export function quietLogger(): Logger {
  const lines: string[] = [];
  const destination = new Writable({
    write(chunk: Buffer, _encoding, done) {
      lines.push(chunk.toString('utf8'));
      done();
    },
  });
  return createLogger({ level: 'warn', pretty: false, destination });
}
