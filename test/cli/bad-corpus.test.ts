import { execFile } from 'node:child_process';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { scratch } from '../support/cli.js';

const run = promisify(execFile);
const BIN = join(import.meta.dirname, '..', '..', 'bin', 'shoal.js');
const BAD = join(import.meta.dirname, '..', 'fixtures', 'bad');

/**
 * The bad-input corpus (test/fixtures/bad, written by make.py and make-arrow.mts there), run through
 * the built CLI. Each case: the file, extra arguments, the exit code and the exact error line without
 * --rejects, and — where rows can be told apart — the rows in the file and how many a run with
 * --rejects refuses; then scored + rejected must equal the rows in the file.
 */
interface Case {
  readonly file: string;
  readonly args?: readonly string[];
  readonly code: number;
  /** The `shoal replay:` line (after the file's folder is replaced by `BAD`), or a warning, or null. */
  readonly message: string | null;
  /** Rows in the file and rows refused with --rejects; null when the file cannot be read row by row. */
  readonly rows: number | null;
  readonly rejected?: number;
}

const CASES: readonly Case[] = [
  { file: 'na-tokens.csv', code: 0, message: null, rows: 12, rejected: 0 },
  {
    file: 'typo-number.csv',
    code: 2,
    message: 'BAD/typo-number.csv line 7: column "temp": expected a number, got "4.2x"',
    rows: 13,
    rejected: 1,
  },
  {
    file: 'semicolons.csv',
    code: 2,
    message:
      'BAD/semicolons.csv line 1: the header is one column, "temp;doors;label": the file is separated by semicolons, and Shoal reads comma-separated CSV (RFC 4180); convert it first',
    rows: null,
  },
  { file: 'bom-crlf.csv', code: 0, message: null, rows: 12, rejected: 0 },
  // A spreadsheet's "CSV UTF-8" export: byte-order mark, CRLF, quoted header with a degree sign.
  { file: 'excel-export.csv', code: 0, message: null, rows: 12, rejected: 0 },
  {
    file: 'duplicate-header.csv',
    code: 2,
    message: 'BAD/duplicate-header.csv: column "temp" appears twice',
    rows: null,
  },
  {
    file: 'unterminated-quote.csv',
    code: 2,
    message: 'BAD/unterminated-quote.csv line 3: unterminated quoted field (the file ends inside it)',
    rows: null,
  },
  {
    file: 'ragged-row.csv',
    code: 2,
    message: 'BAD/ragged-row.csv line 5: malformed CSV: expected 3 fields (as in the header), got 2',
    rows: 14,
    rejected: 2,
  },
  { file: 'empty.csv', code: 2, message: 'BAD/empty.csv: holds no rows', rows: null },
  { file: 'header-only.csv', code: 2, message: 'BAD/header-only.csv: holds no rows', rows: null },
  { file: 'label-years.csv', code: 0, message: null, rows: 12, rejected: 0 },
  { file: 'label-float-codes.csv', code: 0, message: null, rows: 12, rejected: 0 },
  { file: 'label-negative.csv', code: 0, message: null, rows: 12, rejected: 0 },
  {
    file: 'label-negative.csv',
    args: ['--labels-as', 'class-codes'],
    code: 2,
    message:
      'BAD/label-negative.csv line 2: label "-1" is not a class code (an integer from 0 to 1023); set inputs.labelsAs: class-names (--labels-as class-names) to read labels as names',
    rows: 12,
    rejected: 4,
  },
  { file: 'quoted-numbers.csv', code: 0, message: null, rows: 12, rejected: 0 },
  {
    file: 'many-categories.csv',
    code: 0,
    message:
      'warning: column "carrier" has more categories than its 32 codes: 18 values after the first 31 categories shared one overflow code (raise inputs.vocabulary or declare the categories)',
    rows: 80,
    rejected: 0,
  },
  {
    file: 'missing-label-column.csv',
    code: 2,
    message:
      'BAD/missing-label-column.csv: no column "label" for the label; the columns are "temp", "doors", "outcome"',
    rows: null,
  },
  {
    file: 'data.txt',
    code: 2,
    message:
      'BAD/data.txt: cannot tell the format from the extension .txt; give --format arrow|csv|ndjson (known extensions: .arrow, .arrows, .ipc, .feather, .csv, .ndjson, .jsonl, each optionally followed by .gz)',
    rows: null,
  },
  { file: 'data.txt', args: ['--format', 'csv'], code: 0, message: null, rows: 12, rejected: 0 },
  { file: 'compressed.csv.gz', code: 0, message: null, rows: 12, rejected: 0 },
  {
    file: 'broken.csv.gz',
    code: 2,
    message:
      'BAD/broken.csv.gz: read failed after line 5: the gzip stream is damaged or cut short (unexpected end of file)',
    rows: null,
  },
  {
    file: 'not-json.ndjson',
    code: 2,
    message:
      "BAD/not-json.ndjson line 3: not valid JSON (Expected property name or '}' in JSON at position 1)",
    rows: 13,
    rejected: 1,
  },
  {
    file: 'array-line.ndjson',
    code: 2,
    message: 'BAD/array-line.ndjson line 5: expected a JSON object, got an array',
    rows: 13,
    rejected: 1,
  },
  {
    file: 'nested-object.ndjson',
    code: 2,
    message: 'BAD/nested-object.ndjson line 7: column "temp": expected a number, got {"celsius":3}',
    rows: 13,
    rejected: 1,
  },
  {
    file: 'string-in-number.ndjson',
    code: 2,
    message: 'BAD/string-in-number.ndjson line 4: column "temp": expected a number, got "warm"',
    rows: 13,
    rejected: 1,
  },
  { file: 'quoted-number.ndjson', code: 0, message: null, rows: 13, rejected: 0 },
  { file: 'renamed-field.ndjson', code: 0, message: null, rows: 3000, rejected: 0 },
  {
    file: 'truncated-stream.arrows',
    code: 2,
    message:
      'BAD/truncated-stream.arrows: the Arrow IPC stream is cut short or damaged at byte 32728 (the file ends inside a record batch); 2 complete record batches precede it (give --rejects to use them)',
    rows: null,
  },
  {
    file: 'truncated-file.arrow',
    code: 2,
    message:
      'BAD/truncated-file.arrow: the Arrow IPC file is cut short or damaged at byte 32488 (the file ends inside a record batch); 2 complete record batches precede it, but the schema was in the lost footer, so they cannot be read',
    rows: null,
  },
  {
    file: 'garbage.arrow',
    code: 2,
    message:
      'BAD/garbage.arrow: not a readable Arrow IPC file or stream: Expected to read 1886217588 metadata bytes, but only read 19.',
    rows: null,
  },
  {
    file: 'empty.arrow',
    code: 2,
    message: 'BAD/empty.arrow: not a readable Arrow IPC file or stream: no schema',
    rows: null,
  },
  {
    file: 'bom-crlf.csv',
    args: ['--config', join(BAD, 'bad-config.yaml')],
    code: 2,
    // --members 2 on the command line replaces the file's bad `members: ten`: four problems remain.
    message: 'BAD/bad-config.yaml: 4 problems',
    rows: null,
  },
];

async function replay(args: readonly string[]): Promise<{ code: number; out: string; err: string }> {
  try {
    const { stdout, stderr } = await run(process.execPath, [BIN, 'replay', ...args]);
    return { code: 0, out: stdout, err: stderr };
  } catch (e) {
    const failed = e as { code: number; stdout: string; stderr: string };
    return { code: failed.code, out: failed.stdout, err: failed.stderr };
  }
}

describe('the bad-input corpus, through the built CLI', () => {
  it('holds at least 25 files', async () => {
    const { readdir } = await import('node:fs/promises');
    const files = (await readdir(BAD)).filter((f) => !/\.(py|mts)$/.test(f));
    expect(files.length).toBeGreaterThanOrEqual(25);
  });

  for (const c of CASES) {
    const args = c.args ?? [];
    it(`${c.file}${args.length > 0 ? ` ${args.join(' ')}` : ''}: exit ${c.code}${c.message === null ? '' : ', the exact message'}`, async () => {
      const file = join(BAD, c.file);
      const r = await replay([file, '--members', '2', '--json', ...args]);
      expect(r.code).toBe(c.code);
      const lines = r.err.replaceAll(BAD, 'BAD').split('\n');
      if (c.message === null) {
        expect(lines.filter((l) => l.startsWith('shoal') || l.startsWith('warning'))).toEqual([]);
      } else if (c.code === 0) {
        expect(lines).toContain(c.message);
      } else {
        expect(lines).toContain(`shoal replay: ${c.message}`);
        expect(r.err).not.toMatch(/\n\s+at /);
      }
      if (c.rows === null) return;
      const dir = await scratch();
      const rejects = join(dir, 'rejects.ndjson');
      const kept = await replay([file, '--members', '2', '--json', '--rejects', rejects, ...args]);
      expect(kept.code).toBe(0);
      const summary = JSON.parse(kept.out) as { scored: number; rejected: number };
      expect(summary.rejected).toBe(c.rejected);
      expect(summary.scored + summary.rejected).toBe(c.rows);
      const written = (await readFile(rejects, 'utf8')).split('\n').filter((l) => l.length > 0);
      expect(written).toHaveLength(c.rejected!);
      // Two child processes of the built CLI: seconds each when the machine is busy.
    }, 60_000);
  }

  it('a cut Arrow stream with --rejects: the complete batches are scored, the cut is one rejection', async () => {
    const dir = await scratch();
    const rejects = join(dir, 'rejects.ndjson');
    const r = await replay([
      join(BAD, 'truncated-stream.arrows'),
      '--members',
      '2',
      '--json',
      '--rejects',
      rejects,
    ]);
    expect(r.code).toBe(0);
    expect(JSON.parse(r.out)).toMatchObject({ scored: 2000, rejected: 1 });
    expect(await readFile(rejects, 'utf8')).toContain('the 2 complete record batches before it were read');
  }, 60_000);
});
