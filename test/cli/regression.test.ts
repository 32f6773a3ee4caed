import { execFile, execFileSync } from 'node:child_process';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { beforeAll, describe, expect, it } from 'vitest';
import {
  parseJournal,
  type SummaryRecord,
  type ViewFigures,
  type WindowRecord,
} from '../../src/journal/index.js';
import { scratch, shoal } from '../support/cli.js';
import { note } from '../support/note.js';

const run = promisify(execFile);
const BIN = join(import.meta.dirname, '..', '..', 'bin', 'shoal.js');
const ROWS = 20_000;
const HALF = ROWS / 2;

/** What scikit-learn made of the same rows (see test/support/friedman_reference.py). */
interface Reference {
  readonly version: string;
  readonly sgdRmse: number;
  readonly planeRmse: number;
  readonly variance: number;
}

/** The run's last window record (its window: the last `evaluation.window` judged rows) and summary. */
async function outcome(journal: string): Promise<{ last: ViewFigures; summary: SummaryRecord }> {
  const records = parseJournal(await readFile(journal, 'utf8'), journal);
  const windows = records.filter((r): r is WindowRecord => r.type === 'window');
  const summary = records.find((r): r is SummaryRecord => r.type === 'summary')!;
  return { last: windows[windows.length - 1]!.window, summary };
}

describe('regression replayed through the shoal binary (task: regression)', () => {
  let dir: string;
  let file: string;
  let reference: Reference;

  beforeAll(async () => {
    dir = await scratch();
    file = join(dir, 'friedman1.csv');
    // Friedman #1 (Friedman, Annals of Statistics 19, 1991), written by scikit-learn's make_friedman1.
    const script = join(import.meta.dirname, '..', 'support', 'friedman_reference.py');
    reference = JSON.parse(
      execFileSync('python3', [script, file, String(ROWS), '7'], { encoding: 'utf8' }),
    ) as Reference;
    expect(reference.version).toBe('1.9.1');
  }, 120_000);

  it('a linear learner lands between the best plane in hindsight and scikit-learn SGDRegressor, test-then-train', async () => {
    // Reference: scikit-learn 1.9.1 SGDRegressor.partial_fit (defaults), each row predicted before it is
    // fitted, in file order; and the least-squares plane fitted to all rows (LinearRegression), which
    // no online linear model can beat on those rows by more than chance. Both RMSEs over the second
    // half of the rows; Shoal's is its window of the last 10,000 judged rows. Margin: 0.05 on either
    // side (2% of the RMSE).
    const config = join(dir, 'linear.yaml');
    await writeFile(
      config,
      'task: regression\nevaluation: { window: 10000 }\nensemble: { members: 1, learners: [{ kind: linear-regression }] }\n',
    );
    const journal = join(dir, 'linear.ndjson');
    await run(process.execPath, [BIN, 'replay', file, '--config', config, '--journal', journal, '--json']);
    const { last } = await outcome(journal);
    note(
      `Friedman #1, rows ${HALF}–${ROWS}: Shoal linear-regression RMSE ${last.rmse?.toFixed(4)}, scikit-learn SGDRegressor ${reference.sgdRmse.toFixed(4)}, least-squares plane ${reference.planeRmse.toFixed(4)}`,
    );
    expect(last.rows).toBe(HALF);
    expect(last.rmse!).toBeGreaterThanOrEqual(reference.planeRmse - 0.05);
    expect(last.rmse!).toBeLessThanOrEqual(reference.sgdRmse + 0.05);
  });

  it('the default regression (bagged regression trees) beats the linear reference and respects the noise floor; journal and report carry MAE, RMSE and R²', async () => {
    const config = join(dir, 'window.yaml');
    await writeFile(config, 'evaluation: { window: 10000 }\n');
    const journal = join(dir, 'trees.ndjson');
    const report = join(dir, 'trees.html');
    const { stdout, stderr } = await run(process.execPath, [
      BIN,
      'replay',
      file,
      '--task',
      'regression',
      '--config',
      config,
      '--journal',
      journal,
      '--report',
      report,
      '--json',
    ]);
    expect(stderr).toMatch(/^ {2}label\s+label, regression target \(numbers\)$/m);
    const printed = JSON.parse(stdout) as Record<string, unknown>;
    expect(printed).toMatchObject({ task: 'regression', rows: ROWS, rejected: 0 });
    expect(printed).not.toHaveProperty('accuracy');
    const { last, summary } = await outcome(journal);
    note(
      `Friedman #1, rows ${HALF}–${ROWS}: bagged regression trees RMSE ${last.rmse?.toFixed(4)} vs SGDRegressor ${reference.sgdRmse.toFixed(4)}; whole run MAE ${summary.mae?.toFixed(4)}, RMSE ${summary.rmse?.toFixed(4)}, R² ${summary.r2?.toFixed(4)}`,
    );
    // y is not linear in x (Friedman 1991: a sine and a square term), so trees must beat a plane.
    expect(last.rmse!).toBeLessThan(0.85 * reference.sgdRmse);
    // The N(0, 1) noise is a floor: mean squared error ≥ 1 less 4 standard errors of the mean of
    // 10,000 squared standard normals (variance 2): 1 − 4·√(2/10⁴).
    expect(last.rmse! ** 2).toBeGreaterThan(1 - 4 * Math.sqrt(2 / HALF));

    // The summary carries the regression figures and none of a classification's.
    expect(summary).toMatchObject({
      task: 'regression',
      rows: ROWS,
      accuracy: null,
      kappa: null,
      classes: [],
    });
    expect(printed).toMatchObject({ mae: summary.mae, rmse: summary.rmse, r2: summary.r2 });
    // R² = 1 − Σe² / Σ(y − ȳ)² = 1 − RMSE² / Var(y) over the same rows (Draper & Smith 1998, from
    // memory), with Var(y) computed by NumPy.
    expect(summary.r2!).toBeCloseTo(1 - summary.rmse! ** 2 / reference.variance, 9);
    expect(summary.mae!).toBeLessThanOrEqual(summary.rmse!);
    expect(last.accuracy).toBeNull();

    const html = await readFile(report, 'utf8');
    expect(html).toContain('<h2>RMSE and MAE over the run</h2>');
    expect(html).toContain('data-series="rmse"');
    expect(html).toContain('data-series="mae"');
    for (const label of ['MAE', 'RMSE', 'R²']) expect(html).toContain(`<span class="label">${label}</span>`);
    expect(html).toContain(`<span class="value">${summary.rmse!.toFixed(3)}</span>`);
    // No class charts: no confusion matrix, no seats (a regression has no member lifecycle), no κ.
    expect(html).not.toContain('Confusion matrix');
    expect(html).not.toContain('<h2>Seats');
    expect(html).not.toContain('κ');
  });

  it('a regression stopped at a checkpoint and resumed ends with the figures of a run never stopped', async () => {
    const first = join(dir, 'first-half.csv');
    const lines = (await readFile(file, 'utf8')).split('\n');
    await writeFile(first, `${lines.slice(0, HALF + 1).join('\n')}\n`);
    const checkpoints = join(dir, 'checkpoints');
    const options = ['--task', 'regression', '--members', '3', '--json'];
    const stopped = await shoal('replay', first, ...options, '--checkpoint', checkpoints);
    expect(stopped.code).toBe(0);
    // The same file grown to its full length, as a recording goes on.
    await writeFile(first, await readFile(file));
    const resumed = await shoal('replay', first, ...options, '--resume', checkpoints);
    const whole = await shoal('replay', file, ...options);
    expect(resumed.code).toBe(0);
    const figures = (out: string) => {
      const { mae, rmse, r2, rows, trained } = JSON.parse(out) as Record<string, number>;
      return { mae, rmse, r2, rows, trained };
    };
    expect(figures(resumed.out)).toEqual(figures(whole.out));
  });

  it('late labels: a regression joins every label to the number served for its row', async () => {
    const config = join(dir, 'late.yaml');
    await writeFile(config, 'evaluation: { window: 10000 }\nensemble: { members: 2 }\n');
    const inlineJournal = join(dir, 'inline.ndjson');
    const lateJournal = join(dir, 'late.ndjson');
    const common = ['replay', file, '--config', config, '--json'];
    const inline = await shoal(...common, '--task', 'regression', '--journal', inlineJournal);
    const late = await shoal(
      ...common,
      '--labels-as',
      'regression',
      '--label-delay',
      '2000',
      '--journal',
      lateJournal,
    );
    expect(inline.code).toBe(0);
    expect(late.code).toBe(0);
    const printed = JSON.parse(late.out) as { rows: number; labels: { joined: number; pending: number } };
    expect(printed.rows).toBe(ROWS);
    expect(printed.labels).toMatchObject({ joined: ROWS, pending: 0 });
    const a = (await outcome(inlineJournal)).last.rmse!;
    const b = (await outcome(lateJournal)).last.rmse!;
    note(
      `Friedman #1, 2 trees, last 10,000 rows: RMSE ${a.toFixed(4)} with inline labels, ${b.toFixed(4)} with labels 2,000 rows late`,
    );
    // Each prediction comes from a model that has not yet learnt the last 2,000 labels: no better, and
    // once the trees have settled, not much worse.
    expect(b).toBeGreaterThan(a - 0.02);
    expect(b).toBeLessThan(a + 0.3);
  });
});

describe('reading regression labels', () => {
  it('a label that is not a number is rejected with its line; every other row is scored', async () => {
    const dir = await scratch();
    const file = join(dir, 'prices.csv');
    const lines = ['size,rooms,label'];
    for (let i = 0; i < 300; i++)
      lines.push(`${50 + (i % 40)},${1 + (i % 5)},${(1000 + 12.5 * (i % 40)).toFixed(1)}`);
    lines[101] = '70,3,about 1200';
    await writeFile(file, `${lines.join('\n')}\n`);
    const rejects = join(dir, 'rejects.ndjson');
    const r = await shoal('replay', file, '--task', 'regression', '--rejects', rejects, '--json');
    expect(r.code).toBe(0);
    expect(JSON.parse(r.out)).toMatchObject({ rows: 299, rejected: 1 });
    const [rejected] = (await readFile(rejects, 'utf8')).trim().split('\n');
    expect(JSON.parse(rejected!)).toMatchObject({
      position: 102,
      reason: `${file} line 102: label "about 1200" is not a number (labels are read as regression targets)`,
    });
  });

  it('flags and settings that contradict a regression are named, all at once', async () => {
    const dir = await scratch();
    const file = join(dir, 'tiny.csv');
    await writeFile(file, 'x,label\n1,2.5\n2,3.5\n');
    const r = await shoal(
      'replay',
      file,
      '--task',
      'regression',
      '--labels-as',
      'class-names',
      '--learner',
      'naive-bayes',
      '--detector',
      'adwin',
    );
    expect(r.code).toBe(2);
    expect(r.err).toContain('--labels-as');
    expect(r.err).toContain('does not fit task regression');
    expect(r.err).toMatch(/--learner: .*must be one of hoeffding-regression-tree, linear-regression/);
    expect(r.err).toMatch(/--detector: .*a regression has no member lifecycle/);
  });
});
