import { execFile } from 'node:child_process';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { beforeAll, describe, expect, it } from 'vitest';
import { FileCheckpointStore } from '../../src/files/index.js';
import { scratch, shoal } from '../support/cli.js';

/**
 * `replay --threads 2` (the built CLI, dist/ via bin/shoal.js: worker threads load compiled files)
 * against the same replay in one thread, on 12,000 rows of SEA (Street & Kim, KDD 2001; PUBLISHED.md)
 * with abrupt changes θ = 7 → 9.5 → 7, so members drift and are replaced: labels inline, and labels held
 * back 300 rows. The journal (but the run's start time and its speed) and the final checkpoint (but the
 * thread count in its configuration) must be the same.
 */
const BIN = join(import.meta.dirname, '..', '..', 'bin', 'shoal.js');
const run = promisify(execFile);
const options = ['--members', '5', '--seed', '3', '--checkpoint-every', '5000', '--json'];
let data: string;

beforeAll(async () => {
  const dir = await scratch();
  data = join(dir, 'sea.csv');
  const made = await shoal(
    'spawn',
    'sea',
    '--rows',
    '12000',
    '--seed',
    '4',
    '--concepts',
    '7,9.5,7',
    '--every',
    '4000',
    '--out',
    data,
  );
  expect(made.code).toBe(0);
});

/** The journal's records without what differs between any two runs (start time, speed). */
async function journal(path: string): Promise<unknown[]> {
  const lines = (await readFile(path, 'utf8')).trim().split('\n');
  return lines.map((line) => {
    const r = JSON.parse(line) as Record<string, unknown>;
    const { startedAt: _a, seconds: _s, rowsPerSecond: _r, ...rest } = r;
    return rest;
  });
}

/** The newest checkpoint's fingerprint, decoder and session, the session's thread count aside. */
async function checkpoint(dir: string): Promise<unknown> {
  const stored = await new FileCheckpointStore(dir).latest();
  const { fingerprint, decoder, session } = stored!.checkpoint.state as {
    fingerprint: string;
    decoder: unknown;
    session: { config: Record<string, unknown> };
  };
  return { fingerprint, decoder, session: { ...session, config: { ...session.config, threads: 0 } } };
}

describe('replay --threads', () => {
  it.each([
    ['inline labels', [] as string[]],
    ['labels held back 300 rows', ['--label-delay', '300']],
  ])('writes the journal and checkpoint of one thread, %s', async (_name, timing) => {
    const dir = await scratch();
    const one = await shoal(
      'replay',
      data,
      ...options,
      ...timing,
      '--journal',
      join(dir, 'one.ndjson'),
      '--checkpoint',
      join(dir, 'one'),
    );
    expect(one.code).toBe(0);
    const two = await run(process.execPath, [
      BIN,
      'replay',
      data,
      ...options,
      ...timing,
      '--threads',
      '2',
      '--journal',
      join(dir, 'two.ndjson'),
      '--checkpoint',
      join(dir, 'two'),
    ]);
    const records = await journal(join(dir, 'one.ndjson'));
    expect((records as { cause?: string }[]).filter((r) => r.cause === 'promoted').length).toBeGreaterThan(0);
    expect(await journal(join(dir, 'two.ndjson'))).toEqual(records);
    expect(await checkpoint(join(dir, 'two'))).toEqual(await checkpoint(join(dir, 'one')));
    const summary = (out: string) => {
      const { seconds: _s, rowsPerSecond: _r, ...rest } = JSON.parse(out) as Record<string, unknown>;
      return rest;
    };
    expect(summary(two.stdout)).toEqual(summary(one.out));
  });

  it('names --threads when the ensemble cannot take threads', async () => {
    const ran = await shoal('replay', data, '--ensemble', 'boosting', '--threads', '2');
    expect(ran.code).not.toBe(0);
    expect(ran.err).toMatch(/--threads: 2 threads need a bagging of a classification/);
  });
});
