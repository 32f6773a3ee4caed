import { execFile } from 'node:child_process';
import { existsSync } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { CompressionTypes } from 'kafkajs';
import { afterEach, describe, expect, inject, it } from 'vitest';
import { stringify } from 'yaml';
import { registerCodecs } from '../../src/kafka/index.js';
import { scratch } from '../support/cli.js';
import { kafkaLib } from '../support/kafka-broker.js';
import { createServeTopics, kafkaSection, serveTopics } from '../support/kafka-config.js';
import { arrowMessage, seaEvents } from '../support/kafka-events.js';
import {
  client,
  countScoreRows,
  killServes,
  readTopic,
  ServeProcess,
  scoreRows,
} from '../support/kafka-serve.js';
import { note } from '../support/note.js';

const run = promisify(execFile);
const repo = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
const script = join(repo, 'test', 'support', 'python', 'outside_client.py');
/** The virtual environment `.ci/run` makes with pinned confluent-kafka and pyarrow wheels from PyPI. */
const venv = join(repo, '.cache', 'py', 'bin', 'python');
const python = existsSync(venv) ? venv : 'python3';
/** Apache Kafka's Java producer, run from source with the broker's jars (`kafkaLib()`). */
const javaProducer = join(repo, 'test', 'support', 'java', 'CompressedProducer.java');
const CODECS = ['snappy', 'lz4'] as const;
const ARROW = { 'content-type': 'application/vnd.apache.arrow.stream' };

describe('an outside client', () => {
  afterEach(killServes);

  it('has its zstd-compressed Arrow events (librdkafka, pyarrow) scored, and reads the scores back with pyarrow', async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    await createServeTopics(brokers, t);
    await run(python, [script, 'produce', brokers, t.events, '1000', '4']);

    const dir = await scratch();
    const config = join(dir, 'shoal.yaml');
    await writeFile(
      config,
      stringify({
        seed: 2,
        ensemble: { kind: 'bagging', members: 3 },
        inputs: { label: 'label', id: 'id' },
        kafka: kafkaSection(brokers, t),
      }),
    );
    const serve = new ServeProcess(config);
    const dead = await readTopic(brokers, t.dead, (seen) => seen.length >= 1);
    const { stdout } = await run(python, [script, 'read', brokers, t.scores, '1000']);
    serve.signal('SIGTERM');
    expect(await serve.exited, serve.stderr).toBe(0);

    // pyarrow (Apache Arrow's C++ implementation) reads the scores Shoal wrote with Arrow JS.
    const read = JSON.parse(stdout) as {
      rows: number;
      ids: number;
      columns: Record<string, string>;
      probabilitySums: number[];
    };
    expect(read.rows).toBe(1000);
    expect(read.ids).toBe(1000);
    expect(read.columns).toEqual({
      id: 'string',
      p_0: 'double',
      p_1: 'double',
      predicted: 'string',
      agreement: 'double',
      voters: 'int32',
      epoch: 'int32',
      event_time: 'timestamp[ms]',
      latency_ms: 'double',
    });
    for (const sum of read.probabilitySums) expect(sum).toBeCloseTo(1, 9);
    // The one zstd-compressed message that is not Arrow is a dead letter, and the consumer kept going.
    expect(dead.length).toBe(1);
    expect(dead[0]!.headers!['shoal-reason']!.toString()).toBe('undecodable');
    expect(dead[0]!.value!.toString()).toBe('zstd-compressed bytes that are not Arrow');
  });

  it('scores snappy- and lz4-compressed batches written by librdkafka, by the Java client and by kafkajs, with no dead letter but the non-Arrow ones', async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    await createServeTopics(brokers, t);
    const dir = await scratch();
    // librdkafka (confluent-kafka 2.16.1): 500 events per codec, and one message per codec that is not Arrow.
    for (const codec of CODECS) await run(python, [script, 'produce', brokers, t.events, '500', '5', codec]);
    // Apache Kafka's Java producer (kafka-clients 4.1.1 with snappy-java 1.1.10.7 and lz4-java 1.8.0):
    // snappy in snappy-java's framed stream, lz4 frames, both in batches of several chunks or blocks.
    const events = seaEvents(8_000, 13);
    const jars = join(await kafkaLib(), '*');
    for (const [k, codec] of CODECS.entries()) {
      const file = join(dir, `${codec}.values`);
      const values: Buffer[] = [];
      for (let i = k * 3_000; i < (k + 1) * 3_000; i += 100) {
        const value = arrowMessage(events, i, i + 100);
        const length = Buffer.alloc(4);
        length.writeUInt32BE(value.length);
        values.push(length, value);
      }
      await writeFile(file, Buffer.concat(values));
      const sent = await run('java', ['-cp', jars, javaProducer, brokers, t.events, codec, file]);
      expect(sent.stdout.trim()).toBe('30');
    }
    // kafkajs with Shoal's codecs (the Java broker decompresses each batch to validate it, so a batch it
    // accepts is well formed).
    registerCodecs();
    const producer = client(brokers).producer();
    await producer.connect();
    for (const [k, compression] of [CompressionTypes.Snappy, CompressionTypes.LZ4].entries()) {
      const messages = [];
      for (let i = 6_000 + k * 1_000; i < 7_000 + k * 1_000; i += 100)
        messages.push({ value: arrowMessage(events, i, i + 100), headers: ARROW });
      await producer.send({ topic: t.events, messages, compression, acks: -1 });
    }
    await producer.disconnect();

    const config = join(dir, 'shoal.yaml');
    await writeFile(
      config,
      stringify({
        seed: 2,
        ensemble: { kind: 'bagging', members: 2 },
        inputs: { label: 'label', id: 'id' },
        kafka: kafkaSection(brokers, t),
      }),
    );
    const serve = new ServeProcess(config);
    const rows = 2 * 500 + 2 * 3_000 + 2 * 1_000;
    const scores = await readTopic(brokers, t.scores, (seen) => countScoreRows(seen) >= rows);
    const dead = await readTopic(brokers, t.dead, (seen) => seen.length >= CODECS.length);
    serve.signal('SIGTERM');
    expect(await serve.exited, serve.stderr).toBe(0);
    const ids = new Set(scoreRows(scores).map((r) => r.id as string));
    note(`snappy and lz4: ${ids.size} distinct ids scored of ${rows}; ${dead.length} dead letters`);
    expect(ids.size).toBe(rows);
    for (const codec of CODECS) {
      expect(ids.has(`py-${codec}-0`) && ids.has(`py-${codec}-499`)).toBe(true);
    }
    expect(ids.has('e0') && ids.has('e7999')).toBe(true);
    // The messages that are not Arrow decompress to the bytes librdkafka was given.
    expect(dead.map((d) => d.value!.toString()).sort()).toEqual(
      CODECS.map((c) => `${c}-compressed bytes that are not Arrow`).sort(),
    );
    for (const d of dead) expect(d.headers!['shoal-reason']!.toString()).toBe('undecodable');
    expect(serve.logs().filter((l) => l.msg === 'joined the group')).toHaveLength(1);
  });
});
