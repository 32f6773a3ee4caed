import { execFile } from 'node:child_process';
import { existsSync } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { encodeScores, type ScoreRows } from '../../src/frames/index.js';
import { scratch } from '../support/cli.js';

const run = promisify(execFile);
const repo = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
const venv = join(repo, '.cache', 'py', 'bin', 'python');
const python = existsSync(venv) ? venv : 'python3';

/** Prints the utf8 columns of an Arrow IPC stream as pyarrow reads them (JSON, nulls as null). */
const READ = `
import json, sys
import pyarrow as pa
table = pa.ipc.open_stream(open(sys.argv[1], 'rb')).read_all()
print(json.dumps({name: table.column(name).to_pylist() for name in ('id', 'predicted')}))
`;

/** Prints the event_time column of an Arrow IPC stream as int64 milliseconds (JSON). */
const READ_TIMES = `
import json, sys
import pyarrow as pa
table = pa.ipc.open_stream(open(sys.argv[1], 'rb')).read_all()
column = table.column('event_time')
assert column.type == pa.timestamp('ms'), column.type
print(json.dumps(column.cast(pa.int64()).to_pylist()))
`;

function scores(
  ids: readonly string[] | null,
  predicted: readonly number[],
  classes: readonly string[],
): ScoreRows {
  const n = predicted.length;
  return {
    first: 0,
    rows: n,
    classes,
    ids,
    probabilities: new Float64Array(n * Math.max(1, classes.length)),
    predicted: Int32Array.from(predicted),
    values: new Float64Array(n),
    agreement: new Float64Array(n),
    voters: new Int32Array(n),
    epoch: new Int32Array(n),
    scoredAt: 0,
  };
}

async function readWithPyarrow(
  bytes: Uint8Array,
): Promise<{ id: (string | null)[]; predicted: (string | null)[] }> {
  const file = join(await scratch(), 'scores.arrows');
  await writeFile(file, bytes);
  const { stdout } = await run(python, ['-c', READ, file]);
  return JSON.parse(stdout) as { id: (string | null)[]; predicted: (string | null)[] };
}

describe('the scores message (Arrow IPC stream)', () => {
  // An outside reader: pyarrow 26.0.1 (installed by .ci/run) reads the id and predicted columns back.
  it('carries ids and class names as pyarrow reads them: ASCII, multi-byte UTF-8, and a row range', async () => {
    const ids = ['leg-1', 'lég-2', '冷蔵-3', 'leg-🚚', '', 'leg-6'];
    const classes = ['accepted', 'rejected ✗'];
    const read = await readWithPyarrow(
      encodeScores(scores(ids, [0, 1, 1, 0, 1, 0], classes), new Float64Array(6), 1, 5),
    );
    expect(read.id).toEqual(ids.slice(1, 5));
    expect(read.predicted).toEqual(['rejected ✗', 'rejected ✗', 'accepted', 'rejected ✗']);
    const ascii = await readWithPyarrow(
      encodeScores(scores(['a', 'bb', 'ccc'], [1, 0, 1], ['no', 'yes']), new Float64Array(3)),
    );
    expect(ascii).toEqual({ id: ['a', 'bb', 'ccc'], predicted: ['yes', 'no', 'yes'] });
  });

  // The event times pyarrow reads back as whole milliseconds (int64): around 1970 on both sides (two's
  // complement below it), today, and the largest time a Date holds, 8.64·10¹⁵ ms (ECMA-262, Time Values
  // and Time Range); a fraction of a millisecond rounds as Math.round does.
  it('carries event times as int64 milliseconds, before 1970 too, as pyarrow reads them', async () => {
    const times = [0, -1, 1, -4_294_967_296, 4_294_967_296, 1_764_750_000_123, 2.5, -31_536_000_000, 8.64e15];
    const file = join(await scratch(), 'times.arrows');
    const n = times.length;
    await writeFile(
      file,
      encodeScores(scores(null, new Array<number>(n).fill(0), ['a']), Float64Array.from(times)),
    );
    const { stdout } = await run(python, ['-c', READ_TIMES, file]);
    expect(JSON.parse(stdout)).toEqual(times.map(Math.round));
  });

  it('writes null ids without an id column, and a null class before any class is known', async () => {
    const read = await readWithPyarrow(encodeScores(scores(null, [0, 0, 0], []), new Float64Array(3)));
    expect(read).toEqual({ id: [null, null, null], predicted: [null, null, null] });
  });
});
