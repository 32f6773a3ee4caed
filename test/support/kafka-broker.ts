import { type ChildProcess, execFile, spawn } from 'node:child_process';
import { createWriteStream, existsSync, type WriteStream } from 'node:fs';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

/**
 * A real Apache Kafka broker for the integration tests: one KRaft node (broker and controller in one JVM)
 * on 127.0.0.1, started from the jars Maven resolves into a git-ignored cache. Tests never fake a broker.
 *
 * @example
 * const broker = await KafkaBroker.start();
 * // … kafkajs clients on broker.bootstrap …
 * await broker.stop();   // SIGTERM; broker.restart() brings it back on the same port with the same data
 */

const here = dirname(fileURLToPath(import.meta.url));
const repo = resolve(here, '..', '..');
/** The jars of `test/support/kafka/pom.xml`; reused when present (delete it to resolve again). */
export const KAFKA_LIB = join(repo, '.cache', 'kafka-lib');
const BROKER_JAR = 'kafka_2.13-4.1.1.jar';
/** The line the broker logs once it accepts clients (kafka.server.KafkaRaftServer). */
const STARTED = /Kafka Server started/;
const START_TIMEOUT_MS = 60_000;
const STOP_TIMEOUT_MS = 30_000;

/** Resolve the broker's jars with Maven unless the cache already holds them; returns the folder. */
export async function kafkaLib(): Promise<string> {
  if (existsSync(join(KAFKA_LIB, BROKER_JAR))) return KAFKA_LIB;
  await run('mvn', [
    '-q',
    '-B',
    '-f',
    join(here, 'kafka', 'pom.xml'),
    'dependency:copy-dependencies',
    '-DincludeScope=runtime',
    `-DoutputDirectory=${KAFKA_LIB}`,
  ]);
  if (!existsSync(join(KAFKA_LIB, BROKER_JAR))) {
    throw new Error(`mvn finished but ${join(KAFKA_LIB, BROKER_JAR)} is missing`);
  }
  return KAFKA_LIB;
}

/**
 * The user every harness broker knows on its SASL_PLAINTEXT listener, for PLAIN, SCRAM-SHA-256 and
 * SCRAM-SHA-512 alike. The password is distinctive so that a test can search logs for it.
 */
export const SASL_USER = 'shoal-test';
export const SASL_PASSWORD = 'harness-secret-5b9e1c';

export class KafkaBroker {
  /** `host:port` for clients. */
  readonly bootstrap: string;
  /** `host:port` of the SASL_PLAINTEXT listener (user `SASL_USER`). */
  readonly saslBootstrap: string;
  /** How long the last start took, from spawning the JVM to the "started" line. */
  startMillis = 0;
  private child: ChildProcess | null = null;
  private log: WriteStream | null = null;

  private constructor(
    private readonly dir: string,
    private readonly lib: string,
    port: number,
    sasl: number,
  ) {
    this.bootstrap = `127.0.0.1:${port}`;
    this.saslBootstrap = `127.0.0.1:${sasl}`;
  }

  /**
   * Format a fresh data folder and start a broker on free loopback ports (the client listener on
   * `port` when given: a fixed address for the README's walk-through).
   */
  static async start(port?: number): Promise<KafkaBroker> {
    const lib = await kafkaLib();
    const dir = await mkdtemp(join(tmpdir(), 'shoal-kafka-'));
    const [free, controller, sasl] = await freePorts(3);
    const broker = new KafkaBroker(dir, lib, port ?? free!, sasl!);
    await writeFile(join(dir, 'server.properties'), properties(dir, port ?? free!, controller!, sasl!));
    await writeFile(join(dir, 'log4j2.properties'), LOG4J);
    const clusterId = (await java(lib, ['kafka.tools.StorageTool', 'random-uuid'])).trim().split('\n').pop()!;
    await java(lib, [
      'kafka.tools.StorageTool',
      'format',
      '-t',
      clusterId,
      '-c',
      join(dir, 'server.properties'),
      '--standalone',
      '--add-scram',
      `SCRAM-SHA-256=[name=${SASL_USER},password=${SASL_PASSWORD}]`,
      '--add-scram',
      `SCRAM-SHA-512=[name=${SASL_USER},password=${SASL_PASSWORD}]`,
    ]);
    await broker.restart();
    return broker;
  }

  /** Whether the broker process is up. */
  get running(): boolean {
    return this.child !== null;
  }

  /** Start the JVM (again) on the same port and data, and wait until it says it started. */
  async restart(): Promise<void> {
    if (this.child !== null) throw new Error('the broker is already running');
    const began = performance.now();
    this.log = createWriteStream(join(this.dir, 'broker.log'), { flags: 'a' });
    const child = spawn(
      'java',
      [
        '-Xmx512m',
        '-XX:TieredStopAtLevel=1',
        '-XX:+UseSerialGC',
        `-Dlog4j2.configurationFile=${join(this.dir, 'log4j2.properties')}`,
        '-cp',
        `${this.lib}/*`,
        'kafka.Kafka',
        join(this.dir, 'server.properties'),
      ],
      { stdio: ['ignore', 'pipe', 'pipe'] },
    );
    this.child = child;
    // A test process that ends (a timeout, a crash) must not leave a JVM behind.
    const orphan = (): void => {
      child.kill('SIGKILL');
    };
    process.once('exit', orphan);
    child.once('exit', () => process.off('exit', orphan));
    child.stderr!.pipe(this.log, { end: false });
    await new Promise<void>((done, fail) => {
      let tail = '';
      const timer = setTimeout(
        () => fail(new Error(`the broker did not start within ${START_TIMEOUT_MS} ms; log: ${this.logPath}`)),
        START_TIMEOUT_MS,
      );
      const onData = (chunk: Buffer): void => {
        this.log!.write(chunk);
        tail = (tail + chunk.toString('utf8')).slice(-4096);
        if (STARTED.test(tail)) {
          clearTimeout(timer);
          child.stdout!.off('data', onData);
          child.stdout!.pipe(this.log!, { end: false });
          done();
        }
      };
      child.stdout!.on('data', onData);
      child.once('exit', (code, signal) => {
        clearTimeout(timer);
        this.child = null;
        fail(
          new Error(`the broker exited (${code ?? signal}) before it started; log: ${this.logPath}\n${tail}`),
        );
      });
    });
    child.removeAllListeners('exit');
    child.once('exit', () => {
      this.child = null;
    });
    this.startMillis = performance.now() - began;
  }

  /** SIGTERM, and wait for the JVM to exit (SIGKILL after 30 s). Data stays for `restart()`. */
  async stop(): Promise<void> {
    const child = this.child;
    if (child === null) return;
    const exited = new Promise<void>((done) => child.once('exit', () => done()));
    child.kill('SIGTERM');
    const timer = setTimeout(() => child.kill('SIGKILL'), STOP_TIMEOUT_MS);
    await exited;
    clearTimeout(timer);
    this.child = null;
    await new Promise<void>((done) => this.log!.end(done));
  }

  /** Stop and delete the data folder. */
  async destroy(): Promise<void> {
    await this.stop();
    await rm(this.dir, { recursive: true, force: true });
  }

  get logPath(): string {
    return join(this.dir, 'broker.log');
  }

  /** The broker's log so far (for a failing test's message). */
  async logText(): Promise<string> {
    return readFile(this.logPath, 'utf8');
  }
}

function properties(dir: string, port: number, controller: number, sasl: number): string {
  const jaas = (module: string, users = ''): string =>
    `org.apache.kafka.common.security.${module} required${users};`;
  return `${[
    'process.roles=broker,controller',
    'node.id=1',
    `listeners=PLAINTEXT://127.0.0.1:${port},CONTROLLER://127.0.0.1:${controller},SASL_PLAINTEXT://127.0.0.1:${sasl}`,
    `advertised.listeners=PLAINTEXT://127.0.0.1:${port},SASL_PLAINTEXT://127.0.0.1:${sasl}`,
    'controller.listener.names=CONTROLLER',
    'inter.broker.listener.name=PLAINTEXT',
    'listener.security.protocol.map=PLAINTEXT:PLAINTEXT,CONTROLLER:PLAINTEXT,SASL_PLAINTEXT:SASL_PLAINTEXT',
    'sasl.enabled.mechanisms=PLAIN,SCRAM-SHA-256,SCRAM-SHA-512',
    `listener.name.sasl_plaintext.plain.sasl.jaas.config=${jaas('plain.PlainLoginModule', ` user_${SASL_USER}="${SASL_PASSWORD}"`)}`,
    `listener.name.sasl_plaintext.scram-sha-256.sasl.jaas.config=${jaas('scram.ScramLoginModule')}`,
    `listener.name.sasl_plaintext.scram-sha-512.sasl.jaas.config=${jaas('scram.ScramLoginModule')}`,
    `controller.quorum.bootstrap.servers=127.0.0.1:${controller}`,
    `log.dirs=${join(dir, 'data')}`,
    'num.partitions=1',
    'auto.create.topics.enable=false',
    'offsets.topic.replication.factor=1',
    'offsets.topic.num.partitions=4',
    'transaction.state.log.replication.factor=1',
    'transaction.state.log.min.isr=1',
    'transaction.state.log.num.partitions=4',
    'share.coordinator.state.topic.replication.factor=1',
    'share.coordinator.state.topic.min.isr=1',
    'group.initial.rebalance.delay.ms=0',
  ].join('\n')}\n`;
}

/** Broker logs at INFO to stdout (the harness reads the "started" line there and copies the rest to a file). */
const LOG4J = `rootLogger.level=INFO
rootLogger.appenderRef.out.ref=out
appender.out.type=Console
appender.out.name=out
appender.out.layout.type=PatternLayout
appender.out.layout.pattern=[%d] %p %m (%c)%n
`;

function java(lib: string, args: string[]): Promise<string> {
  return run('java', ['-cp', `${lib}/*`, ...args]);
}

function run(command: string, args: string[]): Promise<string> {
  return new Promise((done, fail) => {
    execFile(command, args, { maxBuffer: 16 * 1024 * 1024 }, (error, stdout, stderr) => {
      if (error) {
        const hint =
          (error as NodeJS.ErrnoException).code === 'ENOENT'
            ? ` (${command} is not installed: install Java 17 and Maven, or set KAFKA_BROKERS to a running cluster)`
            : '';
        fail(new Error(`${command} ${args.join(' ')} failed${hint}: ${error.message}\n${stderr}`));
      } else done(stdout);
    });
  });
}

/** Ports the OS hands out for listen(0) on loopback, all held open together so they differ. */
async function freePorts(n: number): Promise<number[]> {
  const servers = await Promise.all(
    Array.from(
      { length: n },
      () =>
        new Promise<ReturnType<typeof createServer>>((done) => {
          const s = createServer();
          s.listen(0, '127.0.0.1', () => done(s));
        }),
    ),
  );
  const ports = servers.map((s) => (s.address() as { port: number }).port);
  await Promise.all(servers.map((s) => new Promise((done) => s.close(done))));
  return ports;
}
