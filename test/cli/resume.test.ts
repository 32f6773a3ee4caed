import { readdir, readFile, truncate, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { FileCheckpointStore } from '../../src/files/index.js';
import { scratch, shoal } from '../support/cli.js';

/**
 * `replay --resume` in-process, on 20,000 rows of SEA with an abrupt change (Street & Kim 2001). The
 * run writes a checkpoint every 2,000 rows and one at the end, keeping the newest 3; spoiling the two
 * newest (a flipped byte, cut short, another format version) makes the resume pass over both — naming
 * each file and why — and go on from the one taken at 18,000 rows, and the run still ends with the
 * checkpoint and figures of an uninterrupted run.
 */
let data: string;
const options = ['--ensemble', 'boosting', '--members', '4', '--seed', '3', '--checkpoint-every', '2000'];
let expected: string;
let summary: Record<string, unknown>;

/** Decoder and session of the newest checkpoint in `dir`: what must match between runs. */
async function final(dir: string): Promise<string> {
  const stored = await new FileCheckpointStore(dir).latest();
  expect(stored?.refused).toEqual([]);
  const { decoder, session } = stored!.checkpoint.state;
  return JSON.stringify({ decoder, session });
}

const figures = (s: Record<string, unknown>) => {
  const { seconds: _s, rowsPerSecond: _r, ...rest } = s;
  return rest;
};

beforeAll(async () => {
  const dir = await scratch();
  data = join(dir, 'sea.csv');
  const made = await shoal(
    'spawn',
    'sea',
    '--rows',
    '20000',
    '--seed',
    '4',
    '--concepts',
    '8,9.5',
    '--every',
    '10000',
    '--out',
    data,
  );
  expect(made.code).toBe(0);
  const ran = await shoal('replay', data, ...options, '--checkpoint', join(dir, 'whole'), '--json');
  expect(ran.err).toMatch(/^schema of [^\n]*\n( {2}[^\n]*\n)*$/);
  expected = await final(join(dir, 'whole'));
  summary = JSON.parse(ran.out) as Record<string, unknown>;
});

describe('replay --resume', () => {
  it.each([
    [
      'a flipped byte',
      async (f: string) => {
        const b = await readFile(f);
        b[Math.floor(b.length / 2)]! ^= 0x01;
        await writeFile(f, b);
      },
      /checksum mismatch/,
    ],
    [
      'a cut-short file',
      async (f: string) => truncate(f, (await readFile(f)).length - 1000),
      /cut short: \d+ of \d+ bytes/,
    ],
    [
      'another format version',
      async (f: string) => {
        const text = await readFile(f, 'latin1');
        await writeFile(f, text.replace(/^shoal-checkpoint v1 /, 'shoal-checkpoint v2 '), 'latin1');
      },
      /format version 2; this build reads version 1/,
    ],
  ] as const)(
    'passes over %s, naming the file and why, and ends as an uninterrupted run',
    async (_, spoil, why) => {
      const ck = join(await scratch(), 'ck');
      expect((await shoal('replay', data, ...options, '--checkpoint', ck)).code).toBe(0);
      const names = (await readdir(ck)).sort();
      expect(names).toHaveLength(3);
      const spoilt = names.slice(1).map((n) => join(ck, n));
      for (const f of spoilt) await spoil(f);
      const resumed = await shoal('replay', data, ...options, '--resume', ck, '--json');
      expect(resumed.code, resumed.err).toBe(0);
      // The schema lines the run prints before its first row are not part of what it tells here.
      const told = resumed.err
        .split('\n')
        .filter((l) => l !== '' && !l.startsWith('schema of ') && !l.startsWith('  '));
      expect(told).toHaveLength(3);
      for (const [i, f] of [...spoilt].reverse().entries()) {
        expect(told[i]).toContain(`refused checkpoint ${f}: `);
        expect(told[i]).toMatch(why);
      }
      expect(told[2]).toBe(`shoal replay: going on from ${join(ck, names[0]!)}`);
      expect(figures(JSON.parse(resumed.out) as Record<string, unknown>)).toEqual(figures(summary));
      expect(await final(ck)).toBe(expected);
    },
  );

  it('refuses a resume under another configuration, naming the checkpoint', async () => {
    const ck = join(await scratch(), 'ck');
    expect((await shoal('replay', data, ...options, '--checkpoint', ck)).code).toBe(0);
    const other = await shoal('replay', data, ...options, '--seed', '4', '--resume', ck);
    expect(other.code).toBe(2);
    expect(other.err).toMatch(/checkpoint-\d+\.shoal was written by a run with another configuration/);
  });

  it('refuses a resume given other label timing options, naming them as given first and now', async () => {
    const ck = join(await scratch(), 'ck');
    const first = ['--ensemble', 'bagging', '--members', '2', '--checkpoint-every', '5000'];
    expect((await shoal('replay', data, ...first, '--label-delay', '100', '--checkpoint', ck)).code).toBe(0);
    const other = await shoal('replay', data, ...first, '--label-delay', '200', '--resume', ck);
    expect(other.code).toBe(2);
    expect(other.err).toMatch(
      /checkpoint-\d+\.shoal was written by a run with other label timing options \(--label-delay 100; this run: --label-delay 200\)/,
    );
    const inline = await shoal('replay', data, ...first, '--resume', ck);
    expect(inline.err).toMatch(/\(--label-delay 100; this run: inline labels, no --time\)/);
    const same = await shoal('replay', data, ...first, '--label-delay', '100', '--resume', ck);
    expect(same.err).toBe('');
  });

  it('refuses what cannot be checkpointed or resumed, saying why', async () => {
    const empty = join(await scratch(), 'none');
    expect((await shoal('replay', data, '--resume', empty)).err).toMatch(/holds no checkpoint to go on from/);
    expect((await shoal('replay', data, '--checkpoint-every', '10')).err).toMatch(
      /--checkpoint-every needs --checkpoint DIR/,
    );
  });
});
