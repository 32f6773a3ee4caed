import { readdir, readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { configFingerprint } from '../../src/checkpoint/index.js';
import type { CheckpointSummary } from '../../src/cli/inspect.js';
import type { EnsembleSnapshot } from '../../src/ensembles/index.js';
import { FileCheckpointStore } from '../../src/files/index.js';
import { modelConfig, type SessionSnapshot } from '../../src/pipeline/index.js';
import { scratch, shoal } from '../support/cli.js';

/** `shoal inspect` on checkpoints of a real replay: 6,000 rows of STAGGER a → b (Schlimmer & Granger 1986). */
let dir: string;
let data: string;

beforeAll(async () => {
  const root = await scratch();
  data = join(root, 'stagger.csv');
  dir = join(root, 'ck');
  const made = await shoal(
    'spawn',
    'stagger',
    '--rows',
    '6000',
    '--concepts',
    'a,b',
    '--every',
    '3000',
    '--out',
    data,
  );
  expect(made.code).toBe(0);
  const ran = await shoal(
    'replay',
    data,
    '--members',
    '3',
    '--seed',
    '2',
    '--checkpoint',
    dir,
    '--checkpoint-every',
    '2500',
  );
  expect(ran.code).toBe(0);
});

describe('shoal inspect', () => {
  it('summarises the newest checkpoint of a directory as JSON, matching what the checkpoint holds', async () => {
    const ran = await shoal('inspect', dir, '--json');
    expect(ran.err).toBe('');
    const s = JSON.parse(ran.out) as CheckpointSummary;
    const stored = (await new FileCheckpointStore(dir).latest())!;
    const session = stored.checkpoint.state.session as SessionSnapshot;
    expect(s.file).toBe(stored.where);
    expect(s.refused).toEqual([]);
    // The fingerprint leaves out `threads`: a checkpoint resumes on any number of threads.
    expect(s.fingerprint).toBe(configFingerprint(modelConfig(session.config)));
    expect(s.createdAt).toBe(stored.checkpoint.state.createdAt);
    expect(Number.isNaN(Date.parse(s.createdAt))).toBe(false);
    expect(s.ensemble).toBe('bagging');
    expect(s.classes).toEqual(['0', '1']);
    expect([s.scored, s.trained, s.judged]).toEqual([6000, 6000, 6000]);
    expect(s.positions).toEqual({ [data]: '6000' });
    expect(s.pending).toEqual({ waiting: 0, capacity: session.pending!.capacity });
    expect(s.early).toEqual({ waiting: 0, capacity: session.early.capacity });
    expect(s.window.accuracy).toBeGreaterThan(0.9);
    expect(s.seats).toHaveLength(3);
    const seats = (session.ensemble as EnsembleSnapshot).lifecycle.seats;
    s.seats.forEach((seat, i) => {
      expect(seat.member).toBe(seats[i]!.memberId);
      expect(seat.state).toBe(seats[i]!.state);
      expect(seat.age).toBe(seats[i]!.age);
      expect(seat.learner).toBe('hoeffding-tree');
      expect(seat.tree!.nodes).toBeGreaterThanOrEqual(1);
      expect(seat.tree!.leaves).toBeLessThanOrEqual(seat.tree!.nodes);
      expect(seat.recentAccuracy).toBeGreaterThanOrEqual(0);
      expect(seat.recentAccuracy).toBeLessThanOrEqual(1);
    });
    expect(s.epoch).toBe((session.ensemble as EnsembleSnapshot).lifecycle.epoch);
  });

  it('prints a readable summary of a checkpoint file', async () => {
    const names = (await readdir(dir)).sort();
    const file = join(dir, names[0]!);
    const ran = await shoal('inspect', file);
    expect(ran.code).toBe(0);
    expect(ran.out).toContain(`checkpoint ${file}\n`);
    expect(ran.out).toMatch(/rows +\d[\d,]* scored, [\d,]+ trained, [\d,]+ judged/);
    expect(ran.out).toMatch(/configuration +fingerprint [0-9a-f]{16}…, bagging, seed 2/);
    expect(ran.out).toMatch(/written +\d{4}-\d\d-\d\dT.* by shoal /);
    expect(ran.out).toMatch(/pending labels +0 waiting/);
    expect(ran.out).toMatch(/early labels +0 waiting \(room for 100,000\)/);
    expect(ran.out).toContain(`resumes         ${data} at `);
    const seatLines = ran.out.split('\n').filter((l) => /^ +\d+ +\d+ +hoeffding-tree /.test(l));
    expect(seatLines).toHaveLength(3);
    for (const l of seatLines) expect(l).toMatch(/\d+ nodes, depth \d+$/);
  });

  it('names a damaged newest checkpoint and why, and reads the one before it', async () => {
    const names = (await readdir(dir)).sort();
    const newest = join(dir, names[names.length - 1]!);
    const good = await readFile(newest);
    const bad = Buffer.from(good);
    bad[bad.length - 10]! ^= 0x20;
    await writeFile(newest, bad);
    try {
      const s = JSON.parse((await shoal('inspect', dir, '--json')).out) as CheckpointSummary;
      expect(s.file).toBe(join(dir, names[names.length - 2]!));
      expect(s.refused).toHaveLength(1);
      expect(s.refused[0]).toMatch(new RegExp(`${newest.replaceAll('.', '\\.')}: checksum mismatch`));
      const text = await shoal('inspect', dir);
      expect(text.out.split('\n')[0]).toBe(`refused ${s.refused[0]}`);
      const direct = await shoal('inspect', newest);
      expect(direct.code).toBe(2);
      expect(direct.err).toContain(`${newest}: checksum mismatch`);
    } finally {
      await writeFile(newest, good);
    }
  });

  it('says what is missing', async () => {
    const ran = await shoal('inspect', join(dir, 'nothing-here'));
    expect(ran.code).toBe(2);
    expect(ran.err).toMatch(/nothing-here: no such checkpoint file or directory/);
    const empty = await scratch();
    expect((await shoal('inspect', empty)).err).toMatch(/holds no checkpoint/);
  });
});
