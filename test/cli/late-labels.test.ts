import { readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { feed, type LabelTiming } from '../../src/cli/replay-feed.js';
import { Rng } from '../../src/core/index.js';
import { FileCheckpointStore } from '../../src/files/index.js';
import { FrameDecoder } from '../../src/frames/index.js';
import { type LabelCounts, parseJournal, type SummaryRecord } from '../../src/journal/index.js';
import { EventClock, type JournalSink, LearningSession, resolveConfig } from '../../src/pipeline/index.js';
import { buildStream, take } from '../../src/streams/index.js';
import { scratch, shoal } from '../support/cli.js';
import { note } from '../support/note.js';

const ROWS = 20_000;
const MOST_LATE = 5000;

/**
 * A recorded SEA stream (Street & Kim 2001) with an id column, an event time `t` (two seconds apart)
 * and `known`, the time each row's label became known (up to 5,000 rows, 10,000 s, late); and the same
 * labels in a file of their own, in the order they became known, with that time, plus 30 repeated
 * labels and 50 for ids never scored. A configuration keeps `known` out of the features.
 */
type Recorded = Awaited<ReturnType<typeof recorded>>;

async function recorded(dir: string) {
  const gen = buildStream({ generator: 'sea', concepts: '8,9', every: ROWS / 2, seed: 4 });
  const block = take(gen, ROWS);
  const ids = Array.from({ length: ROWS }, (_, i) => `leg-${i}`);
  const rng = new Rng(17);
  const late = ids.map(() => Math.floor(rng.next() * (MOST_LATE + 1)));
  const names = gen.schema.features.map((f) => f.name);
  const rows = ids.map((id, i) => {
    const values = Array.from(block.rows.subarray(i * 3, i * 3 + 3), String);
    return [id, ...values, 2 * (i + 1), 2 * (i + 1 + late[i]!), gen.classes[block.labels[i]!]].join(',');
  });
  const events = join(dir, 'events.csv');
  await writeFile(events, `id,${names.join(',')},t,known,label\n${rows.join('\n')}\n`);
  const order = ids.map((_, i) => i).sort((a, b) => late[a]! + a - (late[b]! + b) || a - b);
  const lines = order.map((i) => `${ids[i]},${gen.classes[block.labels[i]!]},${2 * (i + 1 + late[i]!)}`);
  for (let k = 0; k < 30; k++)
    lines.push(`${lines[k * 7]!.split(',').slice(0, 2).join(',')},${2 * (ROWS + MOST_LATE + 1)}`);
  for (let k = 0; k < 50; k++)
    lines.push(`stranger-${k},${gen.classes[k % 2]},${2 * (ROWS + MOST_LATE + 1)}`);
  const labels = join(dir, 'labels.csv');
  await writeFile(labels, `id,label,known\n${lines.join('\n')}\n`);
  const inOrder = join(dir, 'labels-in-order.csv');
  await writeFile(
    inOrder,
    `id,label\n${ids.map((id, i) => `${id},${gen.classes[block.labels[i]!]}`).join('\n')}\n`,
  );
  const config = join(dir, 'shoal.yaml');
  await writeFile(config, 'inputs:\n  exclude: [known]\n');
  return { events, labels, inOrder, config, received: ROWS + 80 };
}

/** Replay in-process through `feed` (the code `shoal replay` runs) and keep the session. */
async function replayed(events: string, timing: LabelTiming, raw: object = {}): Promise<LearningSession> {
  const config = resolveConfig({ ...raw, inputs: { id: 'id', exclude: ['t', 'known'] } }, 'test');
  const decoder = new FrameDecoder({ label: 'label', id: 'id', exclude: ['t', 'known'] });
  const journal: JournalSink = { write: () => {}, flush: async () => {} };
  const clock = new EventClock({ monotonic: () => 0, wall: () => 0 });
  const session = new LearningSession({ config, source: events, journal, clock, version: 'test' });
  await feed({
    file: events,
    decoder,
    session,
    clock,
    timing,
    time: null,
    carryFeatures: false,
    rejects: 'throw',
    deadLetter: () => {
      throw new Error('no row should be refused');
    },
    afterBatch: async () => {},
  });
  return session;
}

function expectCountsAddUp(l: LabelCounts, received: number, kept: number): void {
  expect(l.inline + l.joined + l.duplicate + l.late + l.evicted + l.unknown + l.held).toBe(received);
  expect(l.joined + l.expiredPredictions + l.evictedPredictions + l.pending).toBe(kept);
}

describe('replay with late labels', () => {
  it('joins every label given late and shuffled through --labels; the journal’s counts add up for every kind', async () => {
    const dir = await scratch();
    const { events, labels, config, received } = await recorded(dir);
    for (const kind of ['bagging', 'boosting', 'stacking']) {
      const journal = join(dir, `${kind}.ndjson`);
      const r = await shoal(
        'replay',
        ...[events, '--config', config, '--id', 'id', '--time', 't'],
        ...['--labels', labels, '--label-time', 'known'],
        ...['--ensemble', kind, ...(kind === 'stacking' ? [] : ['--members', '5'])],
        ...['--journal', journal, '--json'],
      );
      expect(r.err).toMatch(/^schema of /);
      expect(r.code).toBe(0);
      const records = parseJournal(await readFile(journal, 'utf8'), journal);
      const summary = records.at(-1) as SummaryRecord;
      expect(summary.type).toBe('summary');
      expect(summary.labels).toMatchObject({
        joined: ROWS,
        duplicate: 30,
        // The 50 labels for ids never scored came after the last event: held for events that never came.
        unknown: 0,
        early: 50,
        held: 50,
        late: 0,
        evicted: 0,
        pending: 0,
      });
      expect(summary).toMatchObject({ scored: ROWS, trained: ROWS, rows: ROWS });
      expectCountsAddUp(summary.labels, received, ROWS);
      // Every window record's counts add up too, at the moment it was written.
      for (const w of records) {
        if (w.type !== 'window') continue;
        expect(w.labels.joined).toBe(w.trained);
        expect(
          w.labels.joined + w.labels.pending + w.labels.expiredPredictions + w.labels.evictedPredictions,
        ).toBe(w.scored);
      }
      const json = JSON.parse(r.out) as { labels: LabelCounts; accuracy: number };
      expect(json.labels).toEqual(summary.labels);
      note(`${kind}, labels up to ${MOST_LATE} rows late: accuracy ${json.accuracy.toFixed(4)}`);
    }
  });

  it('with bagging, labels joined late in their own order build the very model the inline run builds', async () => {
    const dir = await scratch();
    const { events, inOrder } = await recorded(dir);
    const inline = await replayed(events, { kind: 'inline' });
    const snapshot = JSON.stringify(inline.model!.snapshot());
    // The same labels from a file, and the inline labels held back 5,000 rows: training sees the same
    // rows in the same order, so the final models are identical although predictions were served by
    // a model that had not yet learnt from the last 5,000 labels.
    const fromFile = await replayed(events, {
      kind: 'file',
      path: inOrder,
      id: 'id',
      label: 'label',
      time: null,
    });
    const delayed = await replayed(events, { kind: 'delay', rows: MOST_LATE });
    for (const late of [fromFile, delayed]) {
      expect(late.labelCounts()).toMatchObject({ joined: ROWS, inline: 0, unknown: 0, pending: 0 });
      expect(JSON.stringify(late.model!.snapshot())).toBe(snapshot);
    }
    expect(delayed.recentAccuracy).not.toBe(inline.recentAccuracy);
  });

  it('--label-delay-column holds each inline label until the events’ --time reaches it', async () => {
    const dir = await scratch();
    const { events } = await recorded(dir);
    const r = await shoal(
      'replay',
      events,
      '--id',
      'id',
      '--time',
      't',
      '--label-delay-column',
      'known',
      '--json',
    );
    expect(r.err).toMatch(/^schema of /);
    const json = JSON.parse(r.out) as { labels: LabelCounts; rows: number; trained: number };
    expect(json.labels).toMatchObject({ joined: ROWS, inline: 0, unknown: 0, pending: 0 });
    expect(json.rows).toBe(ROWS);
  });

  it('--label-delay without an id column joins by row number; the summary counts the joins', async () => {
    const dir = await scratch();
    const file = join(dir, 'sea.csv');
    expect((await shoal('spawn', 'sea', '--rows', '3000', '--seed', '2', '--out', file)).code).toBe(0);
    const r = await shoal('replay', file, '--label-delay', '250', '--json');
    expect(r.code).toBe(0);
    const json = JSON.parse(r.out) as { labels: LabelCounts; rows: number };
    expect(json.rows).toBe(3000);
    expect(json.labels).toMatchObject({ joined: 3000, inline: 0, pending: 0 });
  });

  it('refuses --labels without --id, and --labels with --label-delay', async () => {
    const dir = await scratch();
    const file = join(dir, 'sea.csv');
    await shoal('spawn', 'sea', '--rows', '10', '--out', file);
    const noId = await shoal('replay', file, '--labels', file);
    expect(noId.code).not.toBe(0);
    expect(noId.err).toContain('--labels needs --id');
    const both = await shoal('replay', file, '--id', 'x', '--labels', file, '--label-delay', '3');
    expect(both.code).not.toBe(0);
    expect(both.err).toContain('not both');
    const time = await shoal('replay', file, '--label-time', 't');
    expect(time.err).toContain('--label-time names a column of the --labels file');
  });

  it.each([
    [
      '--labels with --label-time',
      (d: Recorded) => ['--time', 't', '--labels', d.labels, '--label-time', 'known'],
    ],
    ['--label-delay', () => ['--label-delay', '2500']],
    ['--label-delay-column', () => ['--time', 't', '--label-delay-column', 'known']],
  ] as const)(
    'resumed from a checkpoint while labels are held back (%s), ends as an uninterrupted run',
    async (_, timing) => {
      const dir = await scratch();
      const data = await recorded(dir);
      const options = [data.events, '--config', data.config, '--id', 'id', ...timing(data)];
      const run = [
        ...options,
        '--ensemble',
        'bagging',
        '--members',
        '3',
        '--checkpoint-every',
        '3000',
        '--json',
      ];
      const whole = join(dir, 'whole');
      const uninterrupted = await shoal('replay', ...run, '--checkpoint', whole);
      expect(uninterrupted.err).toMatch(/^schema of /);
      const cut = join(dir, 'cut');
      expect((await shoal('replay', ...run, '--checkpoint', cut)).code).toBe(0);
      // Keep only the oldest of the newest three (taken at 15,000 rows, labels of up to 5,000 rows
      // before it still held back) and go on from it.
      const names = (await readdir(cut)).sort();
      for (const n of names.slice(1)) await rm(join(cut, n));
      const held = await new FileCheckpointStore(cut).latest();
      const session = held!.checkpoint.state.session as { counts: { scored: number; trained: number } };
      expect(session.counts.scored - session.counts.trained).toBeGreaterThan(0);
      const resumed = await shoal('replay', ...run, '--resume', cut);
      expect(resumed.err).not.toMatch(/shoal replay:/);
      // The session as it ends, whole: the model, the evaluation, the counts, the pending store with the
      // time each prediction was served and the label delays (the stream's time, not the wall clock's).
      const final = async (d: string) =>
        JSON.stringify((await new FileCheckpointStore(d).latest())!.checkpoint.state.session);
      expect(await final(cut)).toBe(await final(whole));
      const labels = (r: string) => (JSON.parse(r) as { labels: LabelCounts }).labels;
      expect(labels(resumed.out)).toEqual(labels(uninterrupted.out));
      expect(labels(resumed.out).joined).toBe(ROWS);
    },
  );

  /**
   * Fields that are wall-clock metadata, and only those, may differ between two replays of one file:
   * when a checkpoint was written (`createdAt`, and so the header's byte count and checksum), when the
   * run started (the run record's `startedAt`) and how fast it went (the summary's `seconds` and
   * `rowsPerSecond`).
   */
  const WALL_CLOCK_FIELDS = ['createdAt', 'startedAt', 'seconds', 'rowsPerSecond'] as const;
  const withoutWallClock = (value: Record<string, unknown>): string =>
    JSON.stringify(value, (key, v) =>
      (WALL_CLOCK_FIELDS as readonly string[]).includes(key) ? undefined : v,
    );

  it.each([
    // Without --time the stream's time is the row number, one row a second: 8,000 rows > 7,000 s.
    ['--label-delay', () => ['--label-delay', '8000']],
    [
      '--labels with --label-time',
      (d: Recorded) => ['--time', 't', '--labels', d.labels, '--label-time', 'known'],
    ],
  ] as const)(
    'two replays with late labels (%s) write byte-identical checkpoints and journals, but for wall-clock metadata',
    async (_, timing) => {
      const dir = await scratch();
      const data = await recorded(dir);
      // An age bound the late labels exceed: predictions expire on the stream's time, the same each run.
      const config = join(dir, 'aged.yaml');
      await writeFile(config, 'inputs:\n  exclude: [known]\nlabels:\n  maxAgeSeconds: 7000\n');
      const run = async (name: string) => {
        const out = join(dir, name);
        const r = await shoal(
          'replay',
          data.events,
          '--config',
          config,
          '--id',
          'id',
          ...timing(data),
          '--members',
          '3',
          '--checkpoint',
          out,
          '--checkpoint-every',
          '3000',
          '--journal',
          `${out}.ndjson`,
          '--json',
        );
        expect(r.err).not.toMatch(/shoal replay:/);
        const files = (await readdir(out)).sort();
        const checkpoints = await Promise.all(
          files.map(async (f) => {
            const [header, body] = (await readFile(join(out, f), 'utf8')).split('\n', 2);
            expect(header).toMatch(/^shoal-checkpoint /);
            return withoutWallClock(JSON.parse(body!) as Record<string, unknown>);
          }),
        );
        const journal = (await readFile(`${out}.ndjson`, 'utf8'))
          .trim()
          .split('\n')
          .map((line) => withoutWallClock(JSON.parse(line) as Record<string, unknown>));
        return { files, checkpoints, journal, summary: JSON.parse(r.out) as { labels: LabelCounts } };
      };
      const first = await run('first');
      const second = await run('second');
      expect(second.files).toEqual(first.files);
      expect(first.checkpoints).toHaveLength(3);
      for (let k = 0; k < first.checkpoints.length; k++)
        expect(second.checkpoints[k]).toBe(first.checkpoints[k]);
      expect(second.journal).toEqual(first.journal);
      // Predictions did wait and expire by the stream's time, and labels were delayed by it.
      const labels = first.summary.labels;
      expect(labels.expiredPredictions).toBeGreaterThan(0);
      expect(labels.late).toBeGreaterThan(0);
      const state = JSON.parse(first.checkpoints.at(-1)!) as {
        state: { session: { counts: { delaySeconds: number } } };
      };
      expect(state.state.session.counts.delaySeconds).toBeGreaterThan(1000);
    },
  );
});
