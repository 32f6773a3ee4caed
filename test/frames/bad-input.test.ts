import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tableFromArrays, tableToIPC } from 'apache-arrow';
import { afterAll, describe, expect, it } from 'vitest';
import { ConfigError } from '../../src/core/index.js';
import { readFrames } from '../../src/files/index.js';
import {
  decodeArrowMessage,
  decodeJsonRecord,
  FrameDecoder,
  type FrameOptions,
} from '../../src/frames/index.js';
import { collect, expectShoalError, fixture, scratchDir } from './support.js';

/** Every kind of bad input is refused with a message that names the file and the line, record or column. */
const scratch = scratchDir();
afterAll(() => scratch.remove());

function file(name: string, content: string | Uint8Array): string {
  const path = join(scratch.dir, name);
  writeFileSync(path, content);
  return path;
}

function read(path: string, options: FrameOptions = {}) {
  return collect(readFrames(path, new FrameDecoder(options)));
}

describe('missing files and columns', () => {
  for (const name of ['gone.arrow', 'gone.csv', 'gone.ndjson']) {
    it(`a missing file (${name}) is not-found, naming the path`, async () => {
      const path = join(scratch.dir, name);
      await expectShoalError(() => read(path), 'not-found', new RegExp(`${name}: no such file`));
    });
  }

  it('a file whose extension names no format is refused before reading', async () => {
    await expectShoalError(
      () => read(join(scratch.dir, 'legs.txt')),
      'invalid-parameter',
      /legs\.txt/,
      /extension/,
    );
  });

  for (const name of ['events.arrow', 'events.csv', 'events.ndjson']) {
    it(`a label, id, feature or excluded column that ${name} lacks is not-found, naming file and column`, async () => {
      const path = fixture(name);
      await expectShoalError(
        () => read(path, { label: 'rejected' }),
        'not-found',
        /events\./,
        /no column "rejected" for the label/,
        /"temp"/,
      );
      await expectShoalError(() => read(path, { id: 'trip' }), 'not-found', /no column "trip" for the id/);
      await expectShoalError(
        () =>
          read(path, {
            features: [
              { name: 'temp', kind: 'numeric' },
              { name: 'humidity', kind: 'numeric' },
              { name: 'wind', kind: 'numeric' },
            ],
          }),
        'not-found',
        /no column "humidity", "wind" for features/,
      );
      await expectShoalError(
        () => read(path, { exclude: ['site'] }),
        'not-found',
        /no column "site" to exclude/,
      );
    });
  }

  it('a CSV header that names a column twice is refused', async () => {
    const path = file('twice.csv', 'a,b,a,label\n1,2,3,x\n');
    await expectShoalError(() => read(path), 'invalid-input', /twice\.csv: column "a" appears twice/);
  });
});

describe('malformed text', () => {
  it('a CSV line with the wrong number of fields names file and line', async () => {
    const path = file('short.csv', 'x,y,label\n1,2,a\n\n3,b\n4,5,b\n');
    await expectShoalError(
      () => read(path),
      'invalid-input',
      /short\.csv line 4: malformed CSV: expected 3 fields \(as in the header\), got 2/,
    );
  });

  it('an unterminated quote names the line where its record began, even when rejects are kept', async () => {
    const path = file('open.csv', 'x,name,label\n1,"ok",a\n2,"never closed,b\n3,c,a\n');
    await expectShoalError(
      () => collect(readFrames(path, new FrameDecoder(), { rejects: 'keep' })),
      'invalid-input',
      /open\.csv line 3: unterminated quoted field/,
    );
  });

  it('a quote inside an unquoted field, or text after a closing quote, is malformed (RFC 4180 §2 rules 5–7)', async () => {
    await expectShoalError(
      () => read(file('stray.csv', 'x,name,label\n1,5\'10",a\n')),
      'invalid-input',
      /stray\.csv line 2: .*double quote inside unquoted field 2/,
    );
    await expectShoalError(
      () => read(file('after.csv', 'x,name,label\n1,"a"b,a\n')),
      'invalid-input',
      /after\.csv line 2: .*"b" after the closing quote of field 2/,
    );
  });

  it('a malformed header is refused naming line 1', async () => {
    await expectShoalError(
      () => read(file('header.csv', 'x,"y\'\'z"q,label\n')),
      'invalid-input',
      /header\.csv line 1: malformed header/,
    );
  });

  it('a bad NDJSON line names file and line: not JSON, or not an object', async () => {
    await expectShoalError(
      () => read(file('bad.ndjson', '{"x":1,"label":"a"}\n{"x":2,"label":\n')),
      'invalid-input',
      /bad\.ndjson line 2: not valid JSON/,
    );
    await expectShoalError(
      () => read(file('array.ndjson', '{"x":1,"label":"a"}\n\n[1,2]\n')),
      'invalid-input',
      /array\.ndjson line 3: expected a JSON object, got an array/,
    );
  });

  it('a value of the wrong kind names file, line and column', async () => {
    const temp: FrameOptions = { features: [{ name: 'temp', kind: 'numeric' }] };
    const path = file('word.csv', 'temp,label\n1.5,a\n2.5,b\nwarm,a\n');
    await expectShoalError(
      () => read(path, temp),
      'invalid-input',
      /word\.csv line 4: column "temp": expected a number, got "warm"/,
    );
    const nested = file('nested.ndjson', '{"temp":1,"label":"a"}\n{"temp":{"c":2},"label":"a"}\n');
    await expectShoalError(
      () => read(nested, temp),
      'invalid-input',
      /nested\.ndjson line 2: column "temp": expected a number, got \{"c":2\}/,
    );
  });

  it('an infinite number names file, line and column (a model cannot learn from it)', async () => {
    // IEEE 754 doubles: "Infinity" and 1e999 (beyond the largest double, ~1.8e308) read as ±∞, which
    // would turn the running means and variances of a feature into NaN.
    const temp: FrameOptions = { features: [{ name: 'temp', kind: 'numeric' }] };
    await expectShoalError(
      () => read(file('infinite.csv', 'temp,label\n1.5,a\n-Infinity,b\n'), temp),
      'invalid-input',
      /infinite\.csv line 3: column "temp": expected a finite number, got "-Infinity"/,
    );
    await expectShoalError(
      () => read(file('huge.ndjson', '{"temp":1,"label":"a"}\n{"temp":1e999,"label":"a"}\n'), temp),
      'invalid-input',
      /huge\.ndjson line 2: column "temp": expected a finite number, got Infinity/,
    );
  });

  it('a value after the first batch that does not fit the inferred kind is refused', async () => {
    const path = file('late.csv', 'temp,label\n1.5,a\n2.5,b\nwarm,a\n');
    await expectShoalError(
      () => collect(readFrames(path, new FrameDecoder(), { batchRows: 2 })),
      'invalid-input',
      /late\.csv line 4: column "temp": expected a number, got "warm"/,
    );
  });

  it('a column of JSON objects cannot be a feature', async () => {
    const path = file('objects.ndjson', '{"temp":1,"where":{"lat":1},"label":"a"}\n');
    await expectShoalError(
      () => read(path),
      'invalid-input',
      /objects\.ndjson: column "where" has type JSON object or array, which cannot be a feature/,
    );
  });

  it('a label that is not a class code, an unknown closed category and a missing id are refused', async () => {
    await expectShoalError(
      () => read(file('codes.csv', 'x,label\n1,0\n2,1\n3,-1\n'), { labelsAs: 'class-codes' }),
      'invalid-input',
      /codes\.csv line 4: label "-1" is not a class code/,
    );
    const closed: FrameOptions = {
      features: [{ name: 'size', kind: 'nominal', categories: ['small', 'large'] }],
    };
    await expectShoalError(
      () => read(file('closed.csv', 'size,label\nsmall,a\nhuge,b\n'), closed),
      'invalid-input',
      /closed\.csv line 3: column "size": "huge" is not one of "small", "large"/,
    );
    await expectShoalError(
      () => read(file('noid.ndjson', '{"id":"e1","x":1}\n{"x":2}\n'), { id: 'id' }),
      'invalid-input',
      /noid\.ndjson line 2: no id in column "id"/,
    );
  });

  it("with rejects: 'keep' bad rows come back as values (index and reason) and reading goes on", async () => {
    const path = file('mixed.csv', 'temp,label\n1.5,a\nwarm,a\n2.5\n3.5,b\n');
    const decoder = new FrameDecoder({ features: [{ name: 'temp', kind: 'numeric' }] });
    const { frames, rejected } = await collect(readFrames(path, decoder, { rejects: 'keep' }));
    expect(frames.reduce((s, f) => s + f.rows, 0)).toBe(2);
    expect(Array.from(frames[0]!.values)).toEqual([1.5, 3.5]);
    expect(Array.from(frames[0]!.origin.positions)).toEqual([2, 5]);
    expect(rejected.map((r) => r.index)).toEqual([3, 4]);
    expect(rejected[0]!.reason).toMatch(/mixed\.csv line 3: column "temp": expected a number, got "warm"/);
    expect(rejected[1]!.reason).toMatch(/mixed\.csv line 4: malformed CSV: expected 2 fields/);
  });
});

describe('corrupt Arrow data', () => {
  const whole = readFileSync(fixture('events.arrow'));
  const stream = readFileSync(fixture('events.arrows'));
  const cases: readonly [string, Uint8Array, RegExp][] = [
    [
      'truncated.arrow',
      whole.subarray(0, whole.length - 100),
      /truncated\.arrow: the Arrow IPC file is cut short or damaged at byte \d+ \(the file ends before its footer\); 3 complete record batches precede it \(give --rejects to use them\)/,
    ],
    [
      'truncated.arrows',
      stream.subarray(0, stream.length - 300),
      /truncated\.arrows: the Arrow IPC stream is cut short or damaged at byte \d+ \(.*\); 2 complete record batches precede it/,
    ],
    ['empty.arrow', new Uint8Array(0), /empty\.arrow: not a readable Arrow IPC/],
    ['text.arrow', Buffer.from('leg,temp\n1,2\n'), /text\.arrow: not a readable Arrow IPC/],
  ];
  for (const [name, bytes, message] of cases) {
    it(`${name} is refused, naming the file`, async () => {
      await expectShoalError(() => read(file(name, bytes)), 'invalid-input', message);
    });
  }
});

describe('single messages (Kafka): problems are values, nothing is thrown', () => {
  it('bytes that are not Arrow IPC are not ok, with the reason naming the message', () => {
    const result = decodeArrowMessage(new FrameDecoder(), Buffer.from('{"x":1}'), 'legs/2@88');
    expect(result.ok).toBe(false);
    if (!result.ok) expect(result.reason).toMatch(/^legs\/2@88: not an Arrow IPC message/);
  });

  it('a message without a named column is not ok; a bad row is rejected and the others decode', () => {
    const table = tableFromArrays({ x: new Float64Array([1, 2, 3]), label: new Int32Array([0, 7000, 1]) });
    const bytes = tableToIPC(table, 'stream');
    const missing = decodeArrowMessage(new FrameDecoder({ id: 'leg_id' }), bytes, 'legs/0@5');
    expect(missing.ok).toBe(false);
    if (!missing.ok) expect(missing.reason).toMatch(/legs\/0@5: no column "leg_id" for the id/);
    const result = decodeArrowMessage(new FrameDecoder(), bytes, 'legs/0@6');
    expect(result.ok).toBe(true);
    if (!result.ok) return;
    expect(result.frame.rows).toBe(2);
    expect(Array.from(result.frame.values)).toEqual([1, 3]);
    expect(Array.from(result.frame.labels!)).toEqual([0, 1]);
    expect(Array.from(result.frame.origin.positions)).toEqual([0, 2]);
    expect(result.rejected).toEqual([
      {
        index: 1,
        reason:
          'legs/0@6 row 1: label 7000 is not a class code (an integer from 0 to 1023); set inputs.labelsAs: class-names (--labels-as class-names) to read labels as names',
      },
    ]);
  });

  it('a dictionary column with an unknown closed category rejects only that row', () => {
    const table = tableFromArrays({
      size: ['small', 'huge', 'large', 'huge'],
      label: ['a', 'b', 'a', 'b'],
    });
    const decoder = new FrameDecoder({
      features: [{ name: 'size', kind: 'nominal', categories: ['small', 'large'] }],
    });
    const result = decodeArrowMessage(decoder, tableToIPC(table, 'stream'), 'm');
    expect(result.ok && Array.from(result.frame.values)).toEqual([0, 1]);
    expect(result.ok && result.rejected.map((r) => r.reason)).toEqual([
      'm row 1: column "size": "huge" is not one of "small", "large"',
      'm row 3: column "size": "huge" is not one of "small", "large"',
    ]);
  });

  it('infinite floats of an Arrow column are refused row by row; NaN and null are missing values', () => {
    const table = tableFromArrays({
      temp: Float64Array.from([1.5, Number.POSITIVE_INFINITY, Number.NaN, -2.5]),
      humidity: Float32Array.from([0.5, 0.25, 0.75, Number.NEGATIVE_INFINITY]),
      label: ['a', 'b', 'a', 'b'],
    });
    const result = decodeArrowMessage(new FrameDecoder(), tableToIPC(table, 'stream'), 'm');
    expect(result.ok && result.frame.rows).toBe(2);
    expect(result.ok && Array.from(result.frame.values)).toEqual([1.5, 0.5, Number.NaN, 0.75]);
    expect(result.ok && result.rejected.map((r) => r.reason)).toEqual([
      'm row 1: column "temp": expected a finite number, got Infinity',
      'm row 3: column "humidity": expected a finite number, got -Infinity',
    ]);
  });

  it('a JSON record that does not parse is not ok; a bad value is rejected with its record index', () => {
    const decoder = new FrameDecoder();
    const broken = decodeJsonRecord(decoder, '{"temp": 1,', 'legs/1@40', 40);
    expect(broken.ok).toBe(false);
    if (!broken.ok) expect(broken.reason).toMatch(/^legs\/1@40 record 40: not valid JSON/);
    expect(decodeJsonRecord(decoder, '{"temp": 1.5, "label": "ok"}', 'legs/1@41', 41).ok).toBe(true);
    const bad = decodeJsonRecord(decoder, '{"temp": "hot", "label": "ok"}', 'legs/1@42', 42);
    expect(bad.ok && bad.frame.rows).toBe(0);
    expect(bad.ok && bad.rejected).toEqual([
      { index: 42, reason: 'legs/1@42 record 42: column "temp": expected a number, got "hot"' },
    ]);
  });
});

describe('frame options are validated, every bad field named by its path', () => {
  it('lists each problem of an explicit feature spec', () => {
    let error: unknown;
    try {
      new FrameDecoder(
        {
          label: 'outcome',
          exclude: ['outcome'],
          classes: ['ok', 'ok'],
          vocabulary: 1,
          features: [
            { name: 'temp', kind: 'numeric', values: 3 },
            { name: 'carrier', kind: 'categorical' as 'nominal' },
            { name: 'product', kind: 'nominal', categories: ['dairy', ''], values: 1 },
            { name: 'temp', kind: 'numeric' },
          ],
        },
        'shoal.yaml: input',
      );
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(ConfigError);
    const issues = (error as ConfigError).issues.map((i) => i.path);
    expect(issues).toEqual([
      'exclude[0]',
      'vocabulary',
      'classes[1]',
      'features[0].values',
      'features[1].kind',
      'features[2].categories[1]',
      'features[2].values',
      'features[3].name',
    ]);
    expect((error as ConfigError).message).toMatch(
      /^shoal\.yaml: input: 8 problems\n {2}exclude\[0\]: excludes the label or id column "outcome" \[conflict\]/,
    );
    expect((error as ConfigError).message).toMatch(
      /features\[1\]\.kind: must be numeric or nominal, got "categorical"/,
    );
    expect((error as ConfigError).message).toMatch(/features\[2\]\.values: must be an integer ≥ 2, got 1/);
  });
});
