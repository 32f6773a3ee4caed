import { execFile } from 'node:child_process';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { scratch, shoal } from '../support/cli.js';
import { note } from '../support/note.js';

const run = promisify(execFile);

/** The summary a `replay --json` printed. */
function summary(out: string): { rows: number; accuracy: number; rejected: number } {
  return JSON.parse(out) as { rows: number; accuracy: number; rejected: number };
}

describe('schema inference a few stray values cannot tip', () => {
  it('an R-written CSV with NA stays numeric and scores exactly as the same data with empty cells', async () => {
    // Outside writer: R's write.csv (Debian r-base-core), which writes missing values as NA by default
    // and as empty cells with na = "" (R Data Import/Export manual, "Export to text files").
    const dir = await scratch();
    const plain = join(dir, 'sea.csv');
    expect((await shoal('spawn', 'sea', '--rows', '6000', '--seed', '3', '--out', plain)).code).toBe(0);
    const withNa = join(dir, 'sea-na.csv');
    const withEmpty = join(dir, 'sea-empty.csv');
    const script = [
      `d <- read.csv("${plain}")`,
      'd$f1[seq(3, nrow(d), by = 7)] <- NA',
      'd$f3[seq(5, nrow(d), by = 11)] <- NA',
      `write.csv(d, "${withNa}", row.names = FALSE)`,
      `write.csv(d, "${withEmpty}", row.names = FALSE, na = "")`,
    ].join('; ');
    await run('Rscript', ['-e', script]);
    const text = await readFile(withNa, 'utf8');
    expect(text.split('\n')[3]).toMatch(/^NA,/);
    const na = await shoal('replay', withNa, '--json', '--members', '3');
    const empty = await shoal('replay', withEmpty, '--json', '--members', '3');
    expect(na.code).toBe(0);
    expect(na.err).toMatch(/^ {2}f1\s+numeric$/m);
    expect(na.err).toMatch(/^ {2}f3\s+numeric$/m);
    const a = summary(na.out);
    const b = summary(empty.out);
    note(`R CSV with NA: accuracy ${a.accuracy} (NA) vs ${b.accuracy} (empty cells)`);
    expect(a.rows).toBe(6000);
    expect(a.accuracy).toBe(b.accuracy);
    expect(a.accuracy).toBeGreaterThan(0.8);
  });

  it('a CSV written by pandas (row index, NaN as empty, labels as 1.0) scores exactly as the same data written plainly', async () => {
    // Outside writer: pandas 2.3.3 (PyPI, pinned in .ci/run), DataFrame.to_csv with its defaults — the
    // row index as a first column without a name, NaN written as an empty cell, and a label column of
    // floats written as 1.0 and 0.0 (pandas API reference, DataFrame.to_csv: index=True, na_rep='').
    // The same rows are written again by Python's csv module: no index, integer labels, empty cells.
    const dir = await scratch();
    const plain = join(dir, 'sea.csv');
    expect((await shoal('spawn', 'sea', '--rows', '6000', '--seed', '3', '--out', plain)).code).toBe(0);
    const written = join(dir, 'sea-pandas.csv');
    const other = join(dir, 'sea-plain.csv');
    const script = [
      'import csv, math, sys, pandas as pd',
      'assert pd.__version__ == "2.3.3", pd.__version__',
      'd = pd.read_csv(sys.argv[1])',
      'd.loc[d.index % 7 == 2, "f1"] = float("nan")',
      'd.loc[d.index % 11 == 4, "f3"] = float("nan")',
      'd["label"] = d["label"].astype(float)',
      'd.to_csv(sys.argv[2])',
      'f = open(sys.argv[3], "w", newline=""); w = csv.writer(f); w.writerow(list(d.columns))',
      'for r in d.itertuples(index=False): w.writerow(["" if math.isnan(v) else int(v) if c == "label" else repr(v) for c, v in zip(d.columns, r)])',
      'f.close()',
    ].join('\n');
    await run('python3', ['-c', script, plain, written, other]);
    const lines = (await readFile(written, 'utf8')).split('\n');
    expect(lines[0]).toBe(',f1,f2,f3,label');
    expect(lines[3]).toMatch(/^2,,[^,]+,[^,]+,[01]\.0$/);
    const a = await shoal('replay', written, '--json', '--members', '3');
    const b = await shoal('replay', other, '--json', '--members', '3');
    expect(a.code).toBe(0);
    expect(a.err).toMatch(/^ {2}\(unnamed\)\s+row index \(the first column has no name\): not a feature$/m);
    for (const f of ['f1', 'f2', 'f3']) expect(a.err).toMatch(new RegExp(`^ {2}${f}\\s+numeric$`, 'm'));
    expect(a.err).toMatch(/^ {2}label\s+label, class codes 0, 1, …$/m);
    const pandas = JSON.parse(a.out) as {
      rows: number;
      accuracy: number;
      rejected: number;
      classes: string[];
    };
    const csv = JSON.parse(b.out) as { rows: number; accuracy: number };
    note(`pandas CSV: accuracy ${pandas.accuracy} vs ${csv.accuracy} for the same rows written plainly`);
    expect(pandas).toMatchObject({ rows: 6000, rejected: 0, classes: ['0', '1'] });
    expect(pandas.accuracy).toBe(csv.accuracy);
    expect(pandas.accuracy).toBeGreaterThan(0.8);
  });

  it('a typo, a "?" and a quoted number among numbers leave the column numeric; the typo is rejected by line', async () => {
    const dir = await scratch();
    const file = join(dir, 'legs.csv');
    const rows = ['box_temp,carrier,label'];
    for (let i = 0; i < 200; i++)
      rows.push(`${(i % 17) + 0.5},${i % 3 === 0 ? 'Bluefin' : 'Krillway'},${i % 2}`);
    rows[10] = '4.2x,Bluefin,0';
    rows[20] = '?,Krillway,1';
    rows[30] = '"7.5",Bluefin,0';
    await writeFile(file, `${rows.join('\n')}\n`);
    const rejects = join(dir, 'rejects.ndjson');
    const r = await shoal('replay', file, '--rejects', rejects, '--json', '--members', '2');
    expect(r.code).toBe(0);
    expect(r.err).toMatch(/^ {2}box_temp\s+numeric$/m);
    expect(r.err).toMatch(/^ {2}carrier\s+nominal, 32 codes$/m);
    expect(summary(r.out)).toMatchObject({ rows: 199, rejected: 1 });
    const [rejected] = (await readFile(rejects, 'utf8')).trim().split('\n');
    expect(JSON.parse(rejected!)).toMatchObject({
      position: 11,
      reason: `${file} line 11: column "box_temp": expected a number, got "4.2x"`,
    });
  });

  it('a declared schema (--schema, inputs.features) wins over inference; a bad one is reported by path', async () => {
    const dir = await scratch();
    const file = join(dir, 'codes.csv');
    const rows = ['site,temp,label'];
    for (let i = 0; i < 100; i++) rows.push(`${100 + (i % 4)},${i % 9},${i % 2}`);
    await writeFile(file, `${rows.join('\n')}\n`);
    const schema = join(dir, 'schema.yaml');
    await writeFile(
      schema,
      'features:\n  - { name: site, kind: nominal }\n  - { name: temp, kind: numeric }\n',
    );
    const r = await shoal('replay', file, '--schema', schema, '--json', '--members', '2');
    expect(r.code).toBe(0);
    expect(r.err).toMatch(/\(declared;/);
    expect(r.err).toMatch(/^ {2}site\s+nominal, 32 codes$/m);
    await writeFile(schema, '- { name: site, kind: category }\n');
    const bad = await shoal('replay', file, '--schema', schema);
    expect(bad.code).toBe(2);
    expect(bad.err).toContain('features[0].kind');
  });

  it('a vocabulary that overflows is a warning with a count', async () => {
    const dir = await scratch();
    const file = join(dir, 'many.csv');
    const rows = ['carrier,label'];
    for (let i = 0; i < 100; i++) rows.push(`carrier-${i % 40},${i % 2}`);
    await writeFile(file, `${rows.join('\n')}\n`);
    const r = await shoal('replay', file, '--json', '--members', '2');
    expect(r.code).toBe(0);
    // 32 codes: 31 names get one each, the last is shared by every later name.
    const shared = rows.slice(1).filter((l) => Number(l.split(',')[0]!.split('-')[1]) >= 31).length;
    expect(r.err).toContain(
      `warning: column "carrier" has more categories than its 32 codes: ${shared} values after the first 31 categories shared one overflow code`,
    );
  });
});

describe('a field renamed mid-stream', () => {
  it('raises an input drift whose cause is the missing share, soon after the rename', async () => {
    const dir = await scratch();
    const file = join(dir, 'legs.ndjson');
    const journal = join(dir, 'run.ndjson');
    const lines: string[] = [];
    for (let i = 0; i < 4000; i++) {
      const temp = 2 + (i % 13) / 4;
      const field = i < 2000 ? 'box_temp' : 'box_temperature';
      lines.push(JSON.stringify({ [field]: temp, doors: i % 5, label: temp > 4 ? 1 : 0 }));
    }
    await writeFile(file, `${lines.join('\n')}\n`);
    const r = await shoal('replay', file, '--journal', journal, '--json', '--members', '2');
    expect(r.code).toBe(0);
    const drifts = (await readFile(journal, 'utf8'))
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l) as { type: string; scored: number; feature: string; cause: string })
      .filter((x) => x.type === 'input-drift' && x.cause === 'missing-share');
    expect(drifts).toHaveLength(1);
    expect(drifts[0]).toMatchObject({ feature: 'box_temp' });
    expect(drifts[0]!.scored).toBeGreaterThan(2000);
    expect(drifts[0]!.scored).toBeLessThan(2500);
  });
});
