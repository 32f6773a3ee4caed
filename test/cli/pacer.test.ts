import { describe, expect, it } from 'vitest';
import { Pacer } from '../../src/cli/pacer.js';
import { numericSchema } from '../../src/core/index.js';
import { scratch, shoal } from '../support/cli.js';

describe('replay --pace', () => {
  it('cuts a frame into slices that cover its rows exactly, in order', () => {
    const width = 3;
    const rows = 1234;
    const values = Float64Array.from({ length: rows * width }, (_, i) => i);
    const labels = Float64Array.from({ length: rows }, (_, i) => i);
    const pacer = new Pacer(1000, () => 0);
    const slices = [...pacer.slices({ schema: numericSchema(width), rows, width, values, labels })];
    expect(slices.map((s) => s.rows)).toEqual([...Array(12).fill(100), 34]);
    expect(slices.flatMap((s) => Array.from(s.values))).toEqual(Array.from(values));
    expect(slices.flatMap((s) => Array.from(s.labels!))).toEqual(Array.from(labels));
  });

  it('gives the same run as an unpaced replay', async () => {
    const dir = await scratch();
    const file = `${dir}/sea.arrow`;
    expect((await shoal('synth', 'sea', '--rows', '6000', '--seed', '4', '--out', file)).code).toBe(0);
    const summary = async (...extra: string[]) => {
      const {
        seconds: _s,
        rowsPerSecond: _r,
        ...rest
      } = JSON.parse((await shoal('replay', file, '--json', ...extra)).out);
      return rest;
    };
    expect(await summary('--pace', '20000')).toEqual(await summary());
  });
});
