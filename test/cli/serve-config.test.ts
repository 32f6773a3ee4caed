import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { scratch, shoal } from '../support/cli.js';

async function configFile(text: string): Promise<string> {
  const path = join(await scratch(), 'shoal.yaml');
  await writeFile(path, text);
  return path;
}

describe('shoal serve --check', () => {
  it('prints every problem of a bad configuration with its path and exits 2', async () => {
    const path = await configFile(`
seed: 3
ensemble: { kind: forest }
kafka:
  brokers: [localhost]
  scope: everywhere
  events: { topics: [legs], format: csv }
  scores: {}
  shutdownMs: -5
  sasl: { mechanism: kerberos, username: shoal, password: hunter2, passwordEnv: SHOAL_UNSET_VARIABLE_FOR_TEST }
`);
    const run = await shoal('serve', '--config', path, '--check');
    expect(run.code).toBe(2);
    for (const where of [
      'ensemble.kind',
      'kafka.brokers[0]',
      'kafka.group: is required',
      'kafka.scope',
      'kafka.events.format',
      'kafka.scores.topic',
      'kafka.deadLetters: is required',
      'kafka.shutdownMs',
      'kafka.sasl.mechanism',
      'kafka.sasl.password: secrets are not read from the file',
    ]) {
      expect(run.err).toContain(where);
    }
    expect(run.err).not.toContain('hunter2');
  });

  it('names an environment variable that is not set', async () => {
    const path = await configFile(`
inputs: { id: leg_id }
kafka:
  brokers: [127.0.0.1:9092]
  group: legs
  events: { topics: [legs] }
  labels: { topic: legs-labels }
  scores: { topic: legs-scores }
  deadLetters: { topic: legs-dead }
  sasl: { mechanism: scram-sha-512, username: shoal, passwordEnv: SHOAL_UNSET_VARIABLE_FOR_TEST }
`);
    const run = await shoal('serve', '--config', path, '--check');
    expect(run.code).toBe(2);
    expect(run.err).toContain(
      'kafka.sasl.passwordEnv: the environment variable SHOAL_UNSET_VARIABLE_FOR_TEST is not set',
    );
  });

  it('refuses late labels without an id column, and with scope partition over two events topics', async () => {
    const path = await configFile(`
inputs: { id: null }
kafka:
  brokers: [127.0.0.1:9092]
  group: legs
  scope: partition
  events: { topics: [legs, legs-south] }
  labels: { topic: legs-labels }
  scores: { topic: legs-scores }
  deadLetters: { topic: legs-dead }
`);
    const run = await shoal('serve', '--config', path, '--check');
    expect(run.code).toBe(2);
    expect(run.err).toContain('inputs.id: late labels (kafka.labels) are joined by id');
    expect(run.err).toContain(
      'kafka.events.topics: late labels with scope partition are routed by partition number to the session of one events topic: name one topic, not 2',
    );
  });

  it('takes late labels with scope partition over one events topic', async () => {
    const path = await configFile(`
inputs: { id: leg_id }
kafka:
  brokers: [127.0.0.1:9092]
  group: legs
  scope: partition
  events: { topics: [legs] }
  labels: { topic: legs-labels }
  scores: { topic: legs-scores }
  deadLetters: { topic: legs-dead }
`);
    const run = await shoal('serve', '--config', path, '--check');
    expect(run.code, run.err).toBe(0);
    expect(run.out).toContain('scope: partition');
  });

  it('checks the checkpoint settings: one store, the cadence options by their table', async () => {
    const path = await configFile(`
kafka:
  brokers: [127.0.0.1:9092]
  group: legs
  events: { topics: [legs] }
  scores: { topic: legs-scores }
  deadLetters: { topic: legs-dead }
  checkpoint: { dir: run, topic: legs-checkpoints, everyRows: 0, everySeconds: -1, every: 5 }
`);
    const run = await shoal('serve', '--config', path, '--check');
    expect(run.code).toBe(2);
    for (const line of [
      'kafka.checkpoint: choose one store: dir (files) or topic (a compacted Kafka topic)',
      'kafka.checkpoint.everyRows: must be an integer ≥ 1, got 0',
      'kafka.checkpoint.everySeconds: must be a number > 0, got -1',
      'kafka.checkpoint.every: unknown setting',
    ]) {
      expect(run.err).toContain(line);
    }
    const files = await configFile(`
kafka:
  brokers: [127.0.0.1:9092]
  group: legs
  scope: partition
  delivery: exactly-once
  events: { topics: [legs] }
  scores: { topic: legs-scores }
  deadLetters: { topic: legs-dead }
  checkpoint: { dir: run }
`);
    const refused = await shoal('serve', '--config', files, '--check');
    expect(refused.code).toBe(2);
    expect(refused.err).toContain('kafka.delivery: exactly-once needs the Kafka checkpoint store');
    expect(refused.err).toContain('kafka.delivery: exactly-once is offered with scope global only');
    const fine = await configFile(`
kafka:
  brokers: [127.0.0.1:9092]
  group: legs
  delivery: exactly-once
  events: { topics: [legs] }
  scores: { topic: legs-scores }
  deadLetters: { topic: legs-dead }
  checkpoint: { topic: legs-checkpoints, everyRows: 2000 }
`);
    const ok = await shoal('serve', '--config', fine, '--check');
    expect(ok.code, ok.err).toBe(0);
    expect((parse(ok.out) as { kafka: { checkpoint: unknown } }).kafka.checkpoint).toEqual({
      dir: null,
      topic: 'legs-checkpoints',
      cadence: { everyRows: 2000, everySeconds: 60, keep: 3 },
    });
  });

  it('prints the effective configuration with its defaults', async () => {
    const path = await configFile(`
kafka:
  brokers: [127.0.0.1:9092]
  group: legs
  events: { topics: [legs] }
  scores: { topic: legs-scores }
  deadLetters: { topic: legs-dead }
`);
    const run = await shoal('serve', '--config', path, '--check');
    expect(run.code, run.err).toBe(0);
    const effective = parse(run.out) as { seed: string; kafka: Record<string, unknown> };
    expect(effective.kafka).toMatchObject({
      scope: 'global',
      clientId: 'shoal',
      events: { topics: ['legs'], format: 'arrow', fromBeginning: true, maxMessageBytes: 1048576 },
      journal: { topic: null, file: null },
      checkpoint: { dir: null, topic: null, cadence: { everyRows: 10000, everySeconds: 60, keep: 3 } },
      shutdownMs: 30000,
      sasl: null,
      tls: null,
    });
    expect(effective.seed).toBe('1');
  });
});
