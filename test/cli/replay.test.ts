import { execFile } from 'node:child_process';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { ADWIN_DEFAULTS } from '../../src/drift/index.js';
import { HOEFFDING_TREE_DEFAULTS } from '../../src/learners/index.js';
import { scratch, shoal } from '../support/cli.js';
import { note } from '../support/note.js';

const run = promisify(execFile);
const FIXTURES = join(import.meta.dirname, '..', 'frames', 'fixtures');

describe('shoal spawn → shoal replay', () => {
  it('SEA with concept changes 8 → 9 → 7 → 9.5: accuracy ≥ 0.875, the same summary from Arrow, CSV and NDJSON', async () => {
    // Street & Kim 2001 (PUBLISHED.md): 10% noise bounds accuracy at 90%.
    const dir = await scratch();
    const summaries: Record<string, unknown>[] = [];
    for (const format of ['arrow', 'csv', 'ndjson']) {
      const file = join(dir, `sea.${format}`);
      const made = await shoal(
        'spawn',
        'sea',
        '--rows',
        '100000',
        '--seed',
        '7',
        '--concepts',
        '8,9,7,9.5',
        '--every',
        '25000',
        '--out',
        file,
      );
      expect(made.code).toBe(0);
      expect(made.out).toContain('wrote 100,000 rows of sea');
      const replayed = await shoal('replay', file, '--json');
      expect(replayed.err).toMatch(/^schema of /);
      expect(replayed.err).not.toMatch(/warning/);
      expect(replayed.code).toBe(0);
      summaries.push(JSON.parse(replayed.out) as Record<string, unknown>);
    }
    const [arrow, csv, ndjson] = summaries.map(
      ({ file: _f, seconds: _s, rowsPerSecond: _r, ...rest }) => rest,
    );
    note(
      `spawn → replay on SEA with changes: accuracy ${String(arrow!.accuracy)}, replacements ${String(arrow!.replacements)}`,
    );
    expect(arrow!.rows).toBe(100_000);
    expect(arrow!.accuracy as number).toBeGreaterThanOrEqual(0.875);
    expect(arrow!.accuracy as number).toBeLessThanOrEqual(0.9 + 3 * Math.sqrt(0.09 / 100_000));
    for (const key of [
      'rows',
      'accuracy',
      'kappa',
      'kappaM',
      'kappaNoChange',
      'logLoss',
      'driftSignals',
      'replacements',
      'rowsPerSecond',
    ]) {
      expect(Object.keys(summaries[0]!)).toContain(key);
    }
    expect(csv).toEqual(arrow);
    expect(ndjson).toEqual(arrow);
  }, 120_000);

  it('replays pyarrow-written Arrow (float, int, bool, dictionary-string and null columns), rows without labels scored only', async () => {
    // Outside writer: pyarrow 26.0.1 (test/frames/fixtures/make_fixtures.py); two of its 12 labels are null.
    for (const file of ['events.arrow', 'events.arrows']) {
      const replayed = await shoal(
        'replay',
        join(FIXTURES, file),
        '--id',
        'leg_id',
        '--json',
        '--members',
        '3',
      );
      expect(replayed.err).toMatch(/^schema of /);
      expect(replayed.err).not.toMatch(/warning/);
      const summary = JSON.parse(replayed.out) as { rows: number; classes: string[] };
      expect(summary.rows).toBe(10);
      expect(summary.classes).toEqual(['accepted', 'rejected']);
    }
  });

  it('writes a journal and a self-contained report, and shoal report rebuilds it from the journal', async () => {
    const dir = await scratch();
    const data = join(dir, 'stagger.csv');
    await shoal('spawn', 'stagger', '--rows', '6000', '--concepts', 'a,c', '--every', '3000', '--out', data);
    const journal = join(dir, 'run.ndjson');
    const html = join(dir, 'run.html');
    const replayed = await shoal('replay', data, '--journal', journal, '--report', html);
    expect(replayed.code).toBe(0);
    expect(replayed.out).toMatch(/accuracy\s+0\.\d{4}/);
    const records = (await readFile(journal, 'utf8'))
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l) as { type: string });
    expect(records[0]!.type).toBe('run');
    // The run record holds exactly what ran: every learner and detector option, defaults filled in.
    const ensemble = (records[0] as unknown as { config: { ensemble: Record<string, unknown> } }).config
      .ensemble;
    // The default ensemble's members split with δ = 0.01 (src/ensembles/bagging.ts); the rest are the tree's own defaults.
    expect(ensemble.learners).toEqual([
      { kind: 'hoeffding-tree', ...HOEFFDING_TREE_DEFAULTS, hoeffdingDelta: 0.01 },
    ]);
    expect((ensemble.lifecycle as { detector: unknown }).detector).toEqual({
      kind: 'adwin',
      ...ADWIN_DEFAULTS,
    });
    expect(records.at(-1)!.type).toBe('summary');
    expect(records.some((r) => r.type === 'lifecycle')).toBe(true);
    expect(records.filter((r) => r.type === 'window').length).toBe(6);
    const page = await readFile(html, 'utf8');
    for (const option of [...Object.keys(HOEFFDING_TREE_DEFAULTS), ...Object.keys(ADWIN_DEFAULTS)])
      expect(page).toContain(`<th>${option}</th>`);
    expect(page).toMatch(/^<!doctype html>/i);
    expect(page).not.toMatch(/(src|href)="https?:/);
    const again = join(dir, 'again.html');
    const rebuilt = await shoal('report', journal, '--out', again);
    expect(rebuilt.code).toBe(0);
    expect((await readFile(again, 'utf8')).length).toBeGreaterThan(1000);
  });

  it('still takes the former name of spawn, with a notice, and writes the same stream', async () => {
    const dir = await scratch();
    const args = ['sea', '--rows', '2000', '--seed', '3', '--format', 'csv'];
    const now = await shoal('spawn', ...args, '--out', join(dir, 'now.csv'));
    const before = await shoal('synth', ...args, '--out', join(dir, 'before.csv'));
    expect(before.code).toBe(0);
    expect(before.err).toMatch(/shoal synth is now shoal spawn/);
    expect(now.err).not.toMatch(/synth/);
    expect(await readFile(join(dir, 'before.csv'), 'utf8')).toBe(
      await readFile(join(dir, 'now.csv'), 'utf8'),
    );
  });

  it('takes a shoal.yaml and command-line overrides', async () => {
    const dir = await scratch();
    const data = join(dir, 'sea.arrow');
    await shoal('spawn', 'sea', '--rows', '3000', '--out', data);
    const config = join(dir, 'shoal.yaml');
    await writeFile(
      config,
      'seed: 5\nensemble:\n  kind: boosting\n  members: 4\n  learners:\n    - kind: hoeffding-tree\n      depthLimit: 2\n',
    );
    const replayed = await shoal('replay', data, '--config', config, '--json');
    expect(JSON.parse(replayed.out)).toMatchObject({ ensemble: 'boosting', seed: '5', rows: 3000 });
    const overridden = await shoal(
      'replay',
      data,
      '--config',
      config,
      '--ensemble',
      'bagging',
      '--learner',
      'naive-bayes',
      '--seed',
      '9',
      '--json',
    );
    expect(JSON.parse(overridden.out)).toMatchObject({ ensemble: 'bagging', seed: '9' });
    // Overrides are checked with the file: stacking has no member count.
    const clash = await shoal('replay', data, '--config', config, '--ensemble', 'stacking');
    expect(clash.err).toMatch(/shoal\.yaml: ensemble\.members: unknown setting/);
  });
});

describe('bad input gets one clear message and a non-zero exit', () => {
  it('a missing file names the file', async () => {
    const r = await shoal('replay', '/nonexistent/legs.arrow');
    expect(r.code).not.toBe(0);
    expect(r.err).toMatch(/\/nonexistent\/legs\.arrow/);
    expect(r.err).not.toMatch(/\n\s+at /);
  });

  it('an unknown label column names the column and the file', async () => {
    const r = await shoal('replay', join(FIXTURES, 'events.csv'), '--label', 'outcome');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/outcome/);
    expect(r.err).toMatch(/events\.csv/);
  });

  it('a malformed CSV line names the file and the line', async () => {
    const dir = await scratch();
    const file = join(dir, 'broken.csv');
    await writeFile(file, 'a,b,label\n1,2,x\n3,4\n5,6,y\n');
    const r = await shoal('replay', file);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/broken\.csv/);
    expect(r.err).toMatch(/line 3/);
  });

  it('with --rejects, bad rows go to a file with their reason and the run goes on', async () => {
    const dir = await scratch();
    const file = join(dir, 'mixed.csv');
    const rejects = join(dir, 'rejects.ndjson');
    await writeFile(file, 'a,b,label\n1,2,x\n3,4\n5,6,y\n7,8,y,9\n1,1,x\n');
    const r = await shoal('replay', file, '--rejects', rejects, '--json');
    expect(r.code).toBe(0);
    const summary = JSON.parse(r.out) as { rows: number; rejected: number };
    expect(summary).toMatchObject({ rows: 3, rejected: 2 });
    const lines = (await readFile(rejects, 'utf8'))
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l) as { position: number; reason: string });
    expect(lines.map((l) => l.position)).toEqual([3, 5]);
    for (const l of lines) expect(l.reason).toMatch(/mixed\.csv/);
  });

  it('a corrupt Arrow file names the file; --verbose adds the stack trace', async () => {
    const dir = await scratch();
    const file = join(dir, 'corrupt.arrow');
    const good = await readFile(join(FIXTURES, 'events.arrow'));
    await writeFile(file, good.subarray(0, Math.floor(good.length / 2)));
    const r = await shoal('replay', file);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/corrupt\.arrow/);
    expect(r.err).not.toMatch(/\n\s+at /);
    const loud = await shoal('replay', file, '--verbose');
    expect(loud.err).toMatch(/\n\s+at /);
  });

  it('a bad configuration lists every bad field by its path', async () => {
    const dir = await scratch();
    const config = join(dir, 'shoal.yaml');
    await writeFile(
      config,
      'ensemble:\n  kind: bagging\n  members: 0\n  learners:\n    - kind: hoeffding-tree\n      checkInterval: soon\n      colour: red\n  lifecycle:\n    detector: { kind: adwin, delta: 3 }\nevaluation:\n  window: -1\nsurprise: 1\n',
    );
    const r = await shoal('replay', join(FIXTURES, 'events.csv'), '--config', config);
    expect(r.code).toBe(2);
    for (const path of [
      'ensemble.learners[0].checkInterval',
      'ensemble.learners[0].colour',
      'ensemble.lifecycle.detector',
      'evaluation.window',
      'surprise',
    ]) {
      expect(r.err).toContain(path);
    }
  });

  it('a YAML syntax error names the file and the line', async () => {
    const dir = await scratch();
    const config = join(dir, 'shoal.yaml');
    await writeFile(config, 'ensemble:\n  kind: bagging\n   members: [\n');
    const r = await shoal('replay', join(FIXTURES, 'events.csv'), '--config', config);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/shoal\.yaml line \d+/);
  });

  it('unknown options and commands are refused with a pointer to --help', async () => {
    expect((await shoal('replay', 'x.csv', '--colour', 'red')).err).toMatch(/--colour.*shoal replay --help/s);
    expect((await shoal('spawn', 'sea', '--rows', 'many', '--out', 'x.arrow')).err).toMatch(
      /--rows must be a whole number/,
    );
    expect((await shoal('spawn', 'tides', '--rows', '5', '--out', 'x.arrow')).err).toMatch(
      /unknown generator "tides"/,
    );
    expect((await shoal('teleport')).code).toBe(2);
  });
});

describe('the installed binary', () => {
  it('runs from bin/shoal.js against the built package', async () => {
    const bin = join(import.meta.dirname, '..', '..', 'bin', 'shoal.js');
    const { stdout } = await run(process.execPath, [bin, '--help']);
    expect(stdout).toContain('shoal replay FILE');
    await expect(run(process.execPath, [bin, 'replay', '/nonexistent.csv'])).rejects.toMatchObject({
      code: 2,
    });
  });
});
