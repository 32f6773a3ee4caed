import { execFile } from 'node:child_process';
import { existsSync } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { afterEach, describe, expect, inject, it } from 'vitest';
import { stringify } from 'yaml';
import { scratch } from '../support/cli.js';
import { createServeTopics, kafkaSection, serveTopics } from '../support/kafka-config.js';
import { killServes, readTopic, ServeProcess } from '../support/kafka-serve.js';

const run = promisify(execFile);
const repo = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
const script = join(repo, 'test', 'support', 'python', 'outside_client.py');
/** The virtual environment `.ci/run` makes with pinned confluent-kafka and pyarrow wheels from PyPI. */
const venv = join(repo, '.cache', 'py', 'bin', 'python');
const python = existsSync(venv) ? venv : 'python3';

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

  it('exits 1 with a message naming the codec when a batch is compressed with one it cannot decode (snappy)', async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    await createServeTopics(brokers, t);
    await run(python, [script, 'produce', brokers, t.events, '100', '4', 'snappy']);
    const config = join(await scratch(), 'shoal.yaml');
    await writeFile(
      config,
      stringify({
        seed: 2,
        ensemble: { kind: 'bagging', members: 2 },
        inputs: { id: 'id' },
        kafka: kafkaSection(brokers, t),
      }),
    );
    const serve = new ServeProcess(config);
    expect(await serve.exited).toBe(1);
    expect(serve.stderr).toMatch(/shoal serve: the consumer stopped: .*Snappy/i);
  });
});
