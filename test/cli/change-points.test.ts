import { execFile } from 'node:child_process';
import { existsSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import type { JournalRecord, LifecycleRecord, RunRecord } from '../../src/journal/index.js';
import { parseJournal } from '../../src/journal/index.js';
import { scratch, shoal } from '../support/cli.js';
import { note } from '../support/note.js';

const run = promisify(execFile);
const repo = join(import.meta.dirname, '..', '..');
const venv = join(repo, '.cache', 'py', 'bin', 'python');
const python = existsSync(venv) ? venv : 'python3';
const script = join(repo, 'test', 'support', 'python', 'read_changes.py');

/** The first row at or after `at` and before `next` among `rows`, or null. */
function firstIn(rows: readonly number[], at: number, next: number): number | null {
  return rows.find((r) => r >= at && r < next) ?? null;
}

describe('true change points: spawn records them, replay journals them, the report shows their delays', () => {
  it('SEA θ 8 → 9 → 7 → 9.5 every 25,000 rows, abrupt (Street & Kim 2001)', async () => {
    const dir = await scratch();
    const file = join(dir, 'sea.arrow');
    const spawned = await shoal(
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
    expect(spawned.code).toBe(0);

    // An outside reader (pyarrow 26.0.1, installed by .ci/run) finds the change points in the schema
    // metadata, and the rows agree with SEA's definition (Street & Kim 2001: class 1 iff f1 + f2 ≤ θ,
    // 10% of labels flipped): in the band 8 < f1 + f2 ≤ 9 about 10% of rows are labelled 1 under θ = 8
    // and θ = 7 and about 90% under θ = 9 and θ = 9.5, so each 25,000-row stretch is the concept named.
    const { stdout } = await run(python, [script, file, '25000', '8', '9']);
    const read = JSON.parse(stdout) as { changes: unknown; shares: number[] };
    expect(read.changes).toEqual({
      rows: [25_000, 50_000, 75_000],
      concepts: ['8', '9', '7', '9.5'],
      width: 0,
    });
    note(
      `share labelled 1 in 8 < f1 + f2 ≤ 9 per concept: ${read.shares.map((s) => s.toFixed(3)).join(', ')}`,
    );
    read.shares.forEach((share, i) => {
      // ±0.03: more than four standard errors of a share near 0.1 over the ~2,100 rows of the band.
      expect(Math.abs(share - (i % 2 === 0 ? 0.1 : 0.9))).toBeLessThan(0.03);
    });

    const journalPath = join(dir, 'run.ndjson');
    const reportPath = join(dir, 'report.html');
    const replayed = await shoal('replay', file, '--json', '--journal', journalPath, '--report', reportPath);
    expect(replayed.code).toBe(0);
    const records: JournalRecord[] = parseJournal(await readFile(journalPath, 'utf8'), journalPath);
    const runRecord = records.find((r): r is RunRecord => r.type === 'run')!;
    expect(runRecord.changes).toEqual({
      rows: [25_000, 50_000, 75_000],
      concepts: ['8', '9', '7', '9.5'],
      width: 0,
    });

    // The report's table: each change with the rows to its first drift signal and first replacement,
    // as counted here from the journal's own lifecycle records.
    const lifecycle = records.filter((r): r is LifecycleRecord => r.type === 'lifecycle');
    const signals = lifecycle
      .filter((r) =>
        ['drift', 'drift-on-trial', 'drift-deferred', 'drift-ignored-improving'].includes(r.cause),
      )
      .map((r) => r.trained);
    const replaced = lifecycle.filter((r) => r.to === 'retired').map((r) => r.trained);
    const html = await readFile(reportPath, 'utf8');
    const table = html.slice(
      html.indexOf('<table class="changes">'),
      html.indexOf('</table>', html.indexOf('<table class="changes">')),
    );
    const changes = [25_000, 50_000, 75_000];
    const concepts = ['8 → 9', '9 → 7', '7 → 9.5'];
    const found: string[] = [];
    changes.forEach((at, i) => {
      const next = changes[i + 1] ?? Number.POSITIVE_INFINITY;
      const signal = firstIn(signals, at, next);
      const replacement = firstIn(replaced, at, next);
      const delay = (row: number | null) =>
        row === null ? 'none before the next change' : `+${(row - at).toLocaleString('en-US')} rows`;
      expect(table).toContain(
        `<tr><td>${concepts[i]}</td><td class="num">${at.toLocaleString('en-US')}</td>` +
          `<td class="num">${delay(signal)}</td><td class="num">${delay(replacement)}</td></tr>`,
      );
      found.push(`${concepts[i]}: signal ${delay(signal)}, replacement ${delay(replacement)}`);
      // Each change is answered by a drift signal within the default detector's stated delay plus
      // the understudy's proof (test/ensembles/lifecycle-detectors.test.ts: ADWIN on SEA).
      expect(signal).not.toBeNull();
    });
    note(found.join('; '));
    // Solid lines through the chart at each change, labelled with the concepts.
    expect(html.match(/<g class="true-change"/g)).toHaveLength(3);
    for (const c of concepts) expect(html).toContain(`>${c}</text>`);
  }, 120_000);

  it('a stream with one concept records no change, and the report says every alarm is a false one', async () => {
    const dir = await scratch();
    const file = join(dir, 'led.arrow');
    expect((await shoal('spawn', 'led', '--rows', '3000', '--out', file)).code).toBe(0);
    const reportPath = join(dir, 'report.html');
    expect((await shoal('replay', file, '--json', '--report', reportPath)).code).toBe(0);
    const html = await readFile(reportPath, 'utf8');
    expect(html).toContain('True change points of the stream');
    expect(html).toContain('and no change: every drift signal and replacement in this run is a false alarm.');
    const csv = join(dir, 'led.csv');
    expect((await shoal('spawn', 'led', '--rows', '3000', '--out', csv)).code).toBe(0);
    const csvReport = join(dir, 'csv-report.html');
    expect((await shoal('replay', csv, '--json', '--report', csvReport)).code).toBe(0);
    expect(await readFile(csvReport, 'utf8')).not.toContain('True change points of the stream');
  }, 60_000);
});
