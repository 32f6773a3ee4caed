import { describe, expect, it } from 'vitest';
import { readFrames } from '../../src/files/index.js';
import { FrameDecoder } from '../../src/frames/index.js';
import { collect, concat, fixture, sameDoubles } from './support.js';

/**
 * The same twelve rows in four forms, all written outside Shoal by make_fixtures.py: Arrow IPC file and
 * stream (pyarrow's IPC writer), CSV (pyarrow's CSV writer: RFC 4180 quoting, a field with a line break,
 * doubled quotes, nulls as empty fields) and NDJSON (Python's json module; one record leaves a key out).
 * Read with inferred schemas, every form must give the same frames.
 */
async function read(file: string) {
  const decoder = new FrameDecoder({ id: 'leg_id' });
  const { frames, rejected } = await collect(readFrames(fixture(file), decoder));
  return { decoder, all: concat(frames), rejected };
}

describe('CSV and NDJSON give the same frames as the Arrow form', () => {
  for (const file of ['events.arrows', 'events.csv', 'events.ndjson']) {
    it(`${file} matches events.arrow`, async () => {
      const reference = await read('events.arrow');
      const other = await read(file);
      expect(other.rejected).toEqual([]);
      expect(other.decoder.schema).toEqual(reference.decoder.schema);
      expect(other.all.rows).toBe(12);
      expect(sameDoubles(other.all.values, reference.all.values)).toBe(true);
      expect(sameDoubles(other.all.labels!, reference.all.labels!)).toBe(true);
      expect(other.all.ids).toEqual(reference.all.ids);
      expect(other.decoder.classes).toEqual(reference.decoder.classes);
      for (const name of ['ok', 'product', 'carrier']) {
        expect(other.decoder.categories(name)).toEqual(reference.decoder.categories(name));
      }
    });
  }

  it('numbers text rows by the line they start on (a quoted line break spans two lines)', async () => {
    const decoder = new FrameDecoder({ id: 'leg_id' });
    const { frames } = await collect(readFrames(fixture('events.csv'), decoder, { batchRows: 5 }));
    expect(frames.map((f) => f.rows)).toEqual([5, 5, 2]);
    // make_fixtures.py: rows 5 and 9 hold "North\nStar", so later rows start one line further down.
    const lines = frames.flatMap((f) => Array.from(f.origin.positions));
    expect(lines).toEqual([2, 3, 4, 5, 6, 8, 9, 10, 11, 13, 14, 15]);
    expect(frames[0]!.origin.unit).toBe('line');
  });
});
