import { mkdtemp, readdir, readFile, rm, truncate, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { type RunCheckpoint, runCheckpoint } from '../../src/checkpoint/index.js';
import { FileCheckpointStore, readCheckpointFile } from '../../src/files/index.js';

const checkpoint = (rows: number): RunCheckpoint =>
  runCheckpoint(
    { decoder: {}, session: { kind: 'test-session', version: 1, state: { rows } }, labelTiming: null },
    {
      shoal: '0.1.0',
      fingerprint: 'f'.repeat(64),
      createdAt: new Date(Date.UTC(2026, 11, 2, 10, 0, rows)).toISOString(),
    },
  );
const rowsOf = (c: RunCheckpoint | undefined): unknown =>
  (c?.state.session as { state: { rows: number } } | undefined)?.state.rows;

let dir: string;
beforeEach(async () => {
  dir = await mkdtemp(join(tmpdir(), 'shoal-store-'));
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('file checkpoint store', () => {
  it('writes through a temporary file and keeps the newest K', async () => {
    const store = new FileCheckpointStore(join(dir, 'ck'), { keep: 3 });
    expect(await store.latest()).toBeNull();
    for (let i = 1; i <= 5; i++) await store.save(checkpoint(i * 100));
    const names = (await readdir(join(dir, 'ck'))).sort();
    expect(names).toEqual([
      'checkpoint-000000000002.shoal',
      'checkpoint-000000000003.shoal',
      'checkpoint-000000000004.shoal',
    ]);
    const found = await store.latest();
    expect(found?.refused).toEqual([]);
    expect(rowsOf(found?.checkpoint)).toBe(500);
    // A second store on the same directory (a resumed process) numbers on from the newest.
    const again = new FileCheckpointStore(join(dir, 'ck'), { keep: 3 });
    expect(await again.save(checkpoint(600))).toMatch(/checkpoint-000000000005\.shoal$/);
  });

  it('ignores and clears what an interrupted save left behind', async () => {
    const store = new FileCheckpointStore(dir, { keep: 2 });
    await store.save(checkpoint(100));
    await writeFile(join(dir, 'checkpoint-000000000001.shoal.tmp'), 'shoal-checkpoint v1 bytes=99');
    expect(rowsOf((await store.latest())?.checkpoint)).toBe(100);
    await store.save(checkpoint(200));
    expect((await readdir(dir)).sort()).toEqual([
      'checkpoint-000000000000.shoal',
      'checkpoint-000000000001.shoal',
    ]);
  });

  it.each([
    [
      'a flipped byte',
      async (f: string) => {
        const b = await readFile(f);
        b[b.length - 40]! ^= 0x10;
        await writeFile(f, b);
      },
      /checksum mismatch/,
    ],
    [
      'a cut-short file',
      async (f: string) => {
        const size = (await readFile(f)).length;
        await truncate(f, size - 37);
      },
      /cut short: \d+ of \d+ bytes/,
    ],
    [
      'another format version',
      async (f: string) => {
        const text = (await readFile(f, 'latin1')).replace('shoal-checkpoint v1 ', 'shoal-checkpoint v7 ');
        await writeFile(f, text, 'latin1');
      },
      /format version 7; this build reads version 1/,
    ],
  ] as const)('refuses %s, naming the file and why, and uses the previous one', async (_, spoil, why) => {
    const store = new FileCheckpointStore(dir, { keep: 3 });
    await store.save(checkpoint(100));
    await store.save(checkpoint(200));
    const newest = await store.save(checkpoint(300));
    await spoil(newest);
    const found = await store.latest();
    expect(rowsOf(found?.checkpoint)).toBe(200);
    expect(found?.where).toMatch(/checkpoint-000000000001\.shoal$/);
    expect(found?.refused).toHaveLength(1);
    expect(found?.refused[0]).toContain(newest);
    expect(found?.refused[0]).toMatch(why);
    await expect(readCheckpointFile(newest)).rejects.toThrow(why);
  });

  it('refuses to go on when no checkpoint is good, naming each with its reason', async () => {
    const store = new FileCheckpointStore(dir, { keep: 2 });
    await store.save(checkpoint(1));
    await store.save(checkpoint(2));
    for (const name of await readdir(dir)) await truncate(join(dir, name), 10);
    const failure = await store.latest().then(
      () => null,
      (e: unknown) => e as Error,
    );
    expect(failure?.message).toMatch(/no usable checkpoint in /);
    expect(failure?.message).toMatch(/checkpoint-000000000001\.shoal: cut short within its header/);
    expect(failure?.message).toMatch(/checkpoint-000000000000\.shoal: cut short within its header/);
  });

  it('refuses a keep below 1 and names a missing file', async () => {
    expect(() => new FileCheckpointStore(dir, { keep: 0 })).toThrow(/keep/);
    await expect(readCheckpointFile(join(dir, 'nope.shoal'))).rejects.toThrow(/nope\.shoal/);
  });
});
