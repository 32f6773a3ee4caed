import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { scratch, shoal } from '../support/cli.js';

/** What `shoal demo-stream` refuses before it touches a broker: each message names the option or field. */
describe('shoal demo-stream: bad input', () => {
  it('needs brokers, and each must be HOST:PORT', async () => {
    const none = await shoal('demo-stream', '--rows', '1000');
    expect(none.code).toBe(2);
    expect(none.err).toContain('--brokers: name the brokers (HOST:PORT) or give --config [required]');
    const bad = await shoal('demo-stream', '--brokers', '127.0.0.1:9092,kafka');
    expect(bad.code).toBe(2);
    expect(bad.err).toContain('--brokers: expected HOST:PORT, got "kafka" [wrong-type]');
  });

  it('refuses a rate that is not positive, too few rows and a configuration without labels topic or id', async () => {
    const rate = await shoal('demo-stream', '--brokers', '127.0.0.1:9092', '--rate', '0');
    expect(rate.code).toBe(2);
    expect(rate.err).toContain('--rate must be > 0, got 0');
    const rows = await shoal('demo-stream', '--brokers', '127.0.0.1:9092', '--rows', '10');
    expect(rows.code).toBe(2);
    expect(rows.err).toContain('--rows must be a whole number ≥ 100, got "10"');
    const dir = await scratch();
    const config = join(dir, 'shoal.yaml');
    await writeFile(
      config,
      'kafka:\n  brokers: [127.0.0.1:9092]\n  group: g\n  events: { topics: [legs] }\n  scores: { topic: s }\n  deadLetters: { topic: d }\n',
    );
    const missing = await shoal('demo-stream', '--config', config);
    expect(missing.code).toBe(2);
    expect(missing.err).toContain('2 problems');
    expect(missing.err).toContain(
      'kafka.labels.topic: the inspection results need a labels topic (or give --labels) [required]',
    );
    expect(missing.err).toContain('inputs.id: name the id column (leg ids join the labels) [required]');
  });

  it('prints its options', async () => {
    const help = await shoal('demo-stream', '--help');
    expect(help.code).toBe(0);
    for (const option of ['--brokers', '--config', '--create-only', '--label-wait', '--rate', '--forever']) {
      expect(help.out).toContain(option);
    }
  });
});
