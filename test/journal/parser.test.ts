import { describe, expect, it } from 'vitest';
import { ShoalError } from '../../src/core/index.js';
import { parseJournal } from '../../src/journal/index.js';
import { journalRun } from '../report/journal-run.js';

const run = journalRun({ members: 3, rows: 3000 });
const text = `${run.records.map((r) => JSON.stringify(r)).join('\n')}\n`;
const lines = text.split('\n');

/** The error `parseJournal` throws for `source`, checked to be an `invalid-input` ShoalError. */
function failure(source: string, body: string): ShoalError {
  try {
    parseJournal(body, source);
  } catch (e) {
    expect(e).toBeInstanceOf(ShoalError);
    expect((e as ShoalError).code).toBe('invalid-input');
    return e as ShoalError;
  }
  throw new Error('parseJournal accepted a bad journal');
}

/** The journal with line `n` (1-based) replaced. */
function withLine(n: number, line: string): string {
  return lines.map((l, i) => (i === n - 1 ? line : l)).join('\n');
}

describe('parseJournal', () => {
  it('reads back every record of a real journal exactly, with CRLF endings and blank lines too', () => {
    expect(parseJournal(text, 'run.ndjson')).toEqual(run.records);
    expect(parseJournal(`\n${lines.join('\r\n')}\r\n\r\n`, 'run.ndjson')).toEqual(run.records);
    expect(parseJournal('', 'empty.ndjson')).toEqual([]);
  });

  it('names the source and the line of a line that is not JSON or not a record', () => {
    expect(failure('run.ndjson', withLine(3, '{"type": "window", "row": ')).message).toMatch(
      /^run\.ndjson:3: not a JSON value/,
    );
    expect(failure('run.ndjson', withLine(2, '[1, 2]')).message).toMatch(
      /^run\.ndjson:2: expected a JSON object/,
    );
    expect(failure('j', withLine(4, '{"row": 3}')).message).toMatch(
      /^j:4: a record needs a string type, got nothing/,
    );
  });

  it('names the line, the record and the field of a bad field, nested ones by their path', () => {
    const window = run.records.findIndex((r) => r.type === 'window') + 1;
    const w = JSON.parse(lines[window - 1]!) as Record<string, unknown>;
    const bad = (patch: object): string => withLine(window, JSON.stringify({ ...w, ...patch }));
    expect(failure('run.ndjson', bad({ scored: -3 })).message).toBe(
      `run.ndjson:${window}: window record: scored must be an integer ≥ 0, got -3`,
    );
    expect(failure('run.ndjson', bad({ labels: { ...(w.labels as object), joined: 0.5 } })).message).toBe(
      `run.ndjson:${window}: window record: labels.joined must be an integer ≥ 0, got 0.5`,
    );
    expect(failure('run.ndjson', bad({ window: { ...(w.window as object), kappa: 'high' } })).message).toBe(
      `run.ndjson:${window}: window record: window.kappa must be a number or null, got "high"`,
    );
    expect(failure('run.ndjson', bad({ seats: [0.9, '1'] })).message).toContain(
      'seats[1] must be a number or null',
    );
    const first = JSON.parse(lines[0]!) as Record<string, unknown>;
    const changes = { rows: [5, 3], concepts: ['a', 'b', 'c'], width: 0 };
    expect(failure('x', withLine(1, JSON.stringify({ ...first, changes }))).message).toBe(
      `x:1: run record: changes must be the stream's change points (rows must increase), got ${JSON.stringify(changes)}`,
    );
    const life = run.records.findIndex((r) => r.type === 'lifecycle') + 1;
    const l = JSON.parse(lines[life - 1]!) as Record<string, unknown>;
    expect(failure('x', withLine(life, JSON.stringify({ ...l, to: 'asleep' }))).message).toBe(
      `x:${life}: lifecycle record: to must be one of warming, active, watched, retired, got "asleep"`,
    );
    expect(failure('x', withLine(life, JSON.stringify({ ...l, cause: 'bored' }))).message).toBe(
      `x:${life}: lifecycle record: cause must be one of created, warmed, watched, watch-cleared, drift, drift-on-trial, outperformed, trial-lapsed, drift-deferred, drift-ignored-improving, promoted, fresh, got "bored"`,
    );
    expect(failure('x', withLine(life, JSON.stringify({ ...l, learner: undefined }))).message).toMatch(
      new RegExp(`^x:${life}: lifecycle record: learner must be a string`),
    );
    expect(failure('x', withLine(life, JSON.stringify({ ...l, seat: 1e9 }))).message).toBe(
      `x:${life}: lifecycle record: seat must be an integer in [0, 65535], got 1000000000`,
    );
    const s = JSON.parse(lines[lines.length - 2]!) as Record<string, unknown>;
    expect(
      failure('x', withLine(lines.length - 1, JSON.stringify({ ...s, confusion: [[1, 2], [3]] }))).message,
    ).toContain('summary record: confusion[1] must be a row of 2 counts (a square matrix), got [3]');
    const r = JSON.parse(lines[0]!) as { schema: { features: object[] } };
    const renamed = { ...r, schema: { features: [{ ...r.schema.features[0], name: 7 }] } };
    expect(failure('x', withLine(1, JSON.stringify(renamed))).message).toBe(
      'x:1: run record: schema.features[0].name must be a string, got 7',
    );
  });

  it('refuses another journal version, skips record types it does not know, reads null estimates as NaN', () => {
    const r = JSON.parse(lines[0]!) as object;
    expect(failure('x', withLine(1, JSON.stringify({ ...r, version: 1 }))).message).toBe(
      'x:1: run record: version must be 5 (the journal format this Shoal reads), got 1',
    );
    const extra = `${lines[0]}\n{"type":"checkpoint","scored":100,"bytes":5120}\n${lines.slice(1).join('\n')}`;
    expect(parseJournal(extra, 'x')).toEqual(run.records);
    const record = parseJournal(
      '{"type":"lifecycle","scored":0,"trained":0,"seat":0,"member":0,"learner":"naive-bayes","from":null,"to":"warming","cause":"created","detector":"adwin","estimate":null,"reason":"ensemble created"}',
      'x',
    )[0]!;
    expect(record.type === 'lifecycle' && Number.isNaN(record.estimate)).toBe(true);
  });
});
