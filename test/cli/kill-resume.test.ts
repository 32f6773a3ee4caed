import { type ChildProcess, spawn } from 'node:child_process';
import { readdir } from 'node:fs/promises';
import { join } from 'node:path';
import { setTimeout as sleep } from 'node:timers/promises';
import { beforeAll, describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import { FileCheckpointStore } from '../../src/files/index.js';
import { scratch, shoal } from '../support/cli.js';
import { note } from '../support/note.js';

/**
 * Crash and resume, for real: the built CLI (`dist/`, via bin/shoal.js) replays 200,000 rows of SEA with
 * abrupt concept changes (Street & Kim 2001) — enough for the lifecycle to replace members — writing a
 * checkpoint every 10,000 rows. It is killed with SIGKILL at 5 seeded points (after a seeded number of
 * checkpoints — and at least one more than the process started from — then a seeded pause so the kill
 * lands at an arbitrary moment of the work, a save included), each time resumed with `--resume`, and must end with the checkpoint an uninterrupted run
 * ends with: the same decoder and session snapshot, byte for byte.
 */
const ROWS = 200_000;
const EVERY = 10_000;
const KILLS = 5;
const BIN = join(import.meta.dirname, '..', '..', 'bin', 'shoal.js');
/** Stderr that holds nothing but the schema a run prints before its first row (if it scores any). */
const ONLY_SCHEMA = /^(schema of [^\n]*\n( {2}[^\n]*\n)*)?$/;

let data: string;
beforeAll(async () => {
  data = join(await scratch(), 'sea.csv');
  const made = await shoal(
    'spawn',
    'sea',
    '--rows',
    String(ROWS),
    '--seed',
    '11',
    '--concepts',
    '8,9,7,9.5',
    '--every',
    '50000',
    '--noise',
    '0.1',
    '--out',
    data,
  );
  expect(made.code).toBe(0);
});

interface Child {
  readonly process: ChildProcess;
  readonly done: Promise<{ code: number | null; signal: NodeJS.Signals | null; err: string }>;
}

function start(args: readonly string[]): Child {
  const child = spawn(process.execPath, [BIN, 'replay', data, ...args], {
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  let err = '';
  child.stderr!.on('data', (d: Buffer) => {
    err += d.toString();
  });
  const done = new Promise<{ code: number | null; signal: NodeJS.Signals | null; err: string }>((resolve) => {
    child.on('exit', (code, signal) => resolve({ code, signal, err }));
  });
  return { process: child, done };
}

/** The sequence number of the newest checkpoint file in `dir`, −1 when there is none. */
async function newestSequence(dir: string): Promise<number> {
  const names = await readdir(dir).catch(() => [] as string[]);
  return Math.max(
    -1,
    ...names
      .map((n) => /^checkpoint-(\d+)\.shoal$/.exec(n))
      .filter((m) => m !== null)
      .map((m) => Number(m![1])),
  );
}

/** The parts of a checkpoint that must match: everything but when and by which process it was written. */
async function finalState(dir: string): Promise<string> {
  const stored = await new FileCheckpointStore(dir).latest();
  expect(stored?.refused).toEqual([]);
  const { decoder, session } = stored!.checkpoint.state;
  return JSON.stringify({ decoder, session });
}

describe.each(['bagging', 'boosting', 'stacking'] as const)(
  '%s with the lifecycle, killed and resumed',
  (kind) => {
    it(`ends byte-identical to an uninterrupted run after ${KILLS} SIGKILLs`, {
      timeout: 900_000,
    }, async () => {
      const options = ['--ensemble', kind, '--seed', '5', '--checkpoint-every', String(EVERY)];
      const whole = join(await scratch(), 'ck');
      const straight = await start([...options, '--checkpoint', whole]).done;
      expect(straight.err).toMatch(ONLY_SCHEMA);
      expect(straight.code).toBe(0);
      const expected = await finalState(whole);
      const checkpoints = (await newestSequence(whole)) + 1;

      // Seeded kill points: a checkpoint count to wait for, then a pause of 0–400 ms.
      const rng = new Rng(`kill-${kind}`);
      const targets = Array.from({ length: KILLS }, () => 1 + rng.int(checkpoints - 2)).sort((a, b) => a - b);
      const pauses = targets.map(() => rng.int(400));
      const dir = join(await scratch(), 'ck');
      const killedAt: number[] = [];
      for (let k = 0; k <= KILLS; k++) {
        const child = start(k === 0 ? [...options, '--checkpoint', dir] : [...options, '--resume', dir]);
        if (k === KILLS) {
          const last = await child.done;
          expect(last.err).toMatch(ONLY_SCHEMA);
          expect(last.code).toBe(0);
          break;
        }
        let exited = false;
        void child.done.then(() => {
          exited = true;
        });
        // Each process writes at least one checkpoint of its own before it is killed.
        const target = Math.max(targets[k]!, (await newestSequence(dir)) + 1);
        while (!exited && (await newestSequence(dir)) < target) await sleep(5);
        await sleep(pauses[k]!);
        child.process.kill('SIGKILL');
        const end = await child.done;
        killedAt.push(await newestSequence(dir));
        if (end.signal !== 'SIGKILL') expect(end.code).toBe(0);
      }
      note(
        `${kind}: killed after checkpoints ${killedAt.join(', ')} (pauses ${pauses.join(', ')} ms) of ${checkpoints}`,
      );
      expect(await finalState(dir)).toBe(expected);
    });
  },
);
