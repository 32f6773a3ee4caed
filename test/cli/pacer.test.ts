import { describe, expect, it } from 'vitest';
import { Pacer } from '../../src/cli/pacer.js';
import { scratch, shoal } from '../support/cli.js';

describe('replay --pace', () => {
  it('cuts a frame into ranges that cover its rows exactly, in order', () => {
    expect([...new Pacer(1000, () => 0).ranges(1234)]).toEqual([
      ...Array.from({ length: 12 }, (_, i) => [i * 100, i * 100 + 100]),
      [1200, 1234],
    ]);
    expect([...new Pacer(undefined, () => 0).ranges(1234)]).toEqual([[0, 1234]]);
  });

  it('gives the same run as an unpaced replay', async () => {
    const dir = await scratch();
    const file = `${dir}/sea.arrow`;
    expect((await shoal('spawn', 'sea', '--rows', '6000', '--seed', '4', '--out', file)).code).toBe(0);
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
