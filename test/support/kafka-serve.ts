import { type ChildProcess, spawn } from 'node:child_process';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { tableFromIPC } from 'apache-arrow';
import { Kafka, type KafkaMessage, logLevel, type Message } from 'kafkajs';
import { uniqueName } from './kafka-names.js';

/**
 * Helpers for tests that run `shoal serve` against the test broker: topics, producing events, reading
 * a topic back, and the service as a real child process (so that signals and exit codes are real).
 */

const repo = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');

export function client(brokers: string): Kafka {
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
}

/** A reader that stays subscribed and counts score rows, for tests that wait round after round. */
export class ScoreCounter {
  rows = 0;
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
        counter.rows += tableFromIPC(message.value!).numRows;
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

  stop(): Promise<void> {
    return this.consumer.disconnect();
  }
}

/** Wait until the group has committed at least `offsets[p]` on each partition p of `topic`. */
export async function committed(
  brokers: string,
  group: string,
  topic: string,
  offsets: number[],
): Promise<void> {
  const admin = client(brokers).admin();
  await admin.connect();
  try {
    for (let i = 0; i < 600; i++) {
      const [got] = await admin.fetchOffsets({ groupId: group, topics: [topic] });
      if (offsets.every((o, p) => Number(got!.partitions.find((g) => g.partition === p)?.offset ?? -1) >= o))
        return;
      await new Promise((d) => setTimeout(d, 100));
    }
    throw new Error(`${group} never committed offsets ${offsets.join(', ')} on ${topic}`);
  } finally {
    await admin.disconnect();
  }
}
