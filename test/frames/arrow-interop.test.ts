import { readFileSync } from 'node:fs';
import { makeVector, Table, tableToIPC, Utf8, vectorFromArray } from 'apache-arrow';
import { describe, expect, it } from 'vitest';
import { readArrow } from '../../src/files/index.js';
import { DirectStream } from '../../src/frames/arrow-direct.js';
import { arrowBufferFrames, decodeArrowMessage, describeRow, FrameDecoder } from '../../src/frames/index.js';
import { collect, concat, expectShoalError, fixture, sameDoubles } from './support.js';

/**
 * Arrow IPC interop with an outside writer: the fixtures were written by pyarrow (the version is in each
 * *.expected.json) with test/frames/fixtures/make_fixtures.py, which also wrote the expected values as
 * JSON. Each decoded value is compared with the value pyarrow was given.
 */
interface Expected {
  readonly pyarrow: string;
  readonly batches: readonly number[];
  readonly columns: Readonly<Record<string, readonly (number | string | boolean | null)[]>>;
}

function expected(name: string): Expected {
  return JSON.parse(readFileSync(fixture(name), 'utf8')) as Expected;
}

const events = expected('events.expected.json');
const FEATURES = ['temp', 'doors', 'duty', 'legs', 'count8', 'ok', 'product', 'carrier'];

describe('Arrow IPC written by pyarrow', () => {
  it('records the pyarrow version that wrote the fixtures', () => {
    expect(events.pyarrow).toMatch(/^\d+\.\d+/);
  });

  for (const file of ['events.arrow', 'events.arrows']) {
    it(`decodes ${file} (${file.endsWith('s') ? 'stream' : 'file'} format) to the values pyarrow wrote`, async () => {
      const decoder = new FrameDecoder({ id: 'leg_id' });
      const { frames, rejected } = await collect(readArrow(fixture(file), decoder));
      expect(rejected).toEqual([]);
      // One frame per record batch, as pyarrow wrote them (make_fixtures.py: 5, 4 and 3 rows).
      expect(frames.map((f) => f.rows)).toEqual(events.batches);
      expect(frames.map((f) => f.origin.batch)).toEqual([0, 1, 2]);
      expect(describeRow(frames[1]!, 2)).toBe(`${fixture(file)} batch 1 row 2`);
      const schema = decoder.schema!;
      expect(frames.every((f) => f.schema === schema)).toBe(true);
      expect(schema.features.map((f) => f.name)).toEqual(FEATURES);
      expect(schema.features.map((f) => f.kind)).toEqual([
        'numeric',
        'numeric',
        'numeric',
        'numeric',
        'numeric',
        'nominal',
        'nominal',
        'nominal',
      ]);
      // bool → nominal with 2 values; strings → nominal with the default bounded vocabulary of 32 codes.
      expect(schema.features.slice(5).map((f) => f.values)).toEqual([2, 32, 32]);
      const all = concat(frames);
      expect(all.ids).toEqual(events.columns.leg_id);
      for (let r = 0; r < all.rows; r++) {
        FEATURES.forEach((name, j) => {
          const want = events.columns[name]![r];
          const got = all.values[r * 8 + j]!;
          if (want === null || want === undefined) expect(got, `${name} row ${r}`).toBeNaN();
          else if (schema.features[j]!.kind === 'numeric') expect(got, `${name} row ${r}`).toBe(want);
          else expect(decoder.categories(j)[got], `${name} row ${r}`).toBe(String(want));
        });
        const label = events.columns.label![r];
        if (label === null) expect(all.labels![r]).toBeNaN();
        else expect(decoder.classes[all.labels![r]!]).toBe(label);
      }
      // Codes follow first appearance, also across the stream's replacement dictionary for `product`.
      expect(decoder.categories('product')).toEqual(['dairy', 'produce', 'frozen', 'meat', 'seafood']);
      expect(decoder.categories('carrier')).toEqual([
        'Gull, Tern & Co',
        'The "Blue" Line',
        'North\nStar',
        'Ptarmigan',
        'Skua',
      ]);
      expect(decoder.classes).toEqual(['accepted', 'rejected']);
    });
  }

  it('decodes a whole pyarrow IPC stream as one message (the Kafka form), rows numbered across batches', () => {
    const decoder = new FrameDecoder({ id: 'leg_id' });
    const result = decodeArrowMessage(decoder, readFileSync(fixture('events.arrows')), 'legs/0@7');
    expect(result.ok).toBe(true);
    if (!result.ok) return;
    expect(result.rejected).toEqual([]);
    expect(result.frame.rows).toBe(12);
    expect(result.frame.ids).toEqual(events.columns.leg_id);
    expect(Array.from(result.frame.origin.positions)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11]);
    expect(describeRow(result.frame, 11)).toBe('legs/0@7 row 11');
    expect(result.frame.values[7 * 8]).toBe(12.75); // temp of L-008, as pyarrow wrote it
  });

  const codes = expected('codes.expected.json');
  for (const file of ['codes.arrow', 'codes.arrows']) {
    it(`reads integer labels, uint64, float16 and large_string from ${file}`, async () => {
      const decoder = new FrameDecoder({ exclude: ['seen_at'] });
      const { frames } = await collect(readArrow(fixture(file), decoder));
      expect(frames.map((f) => f.rows)).toEqual(codes.batches);
      const all = concat(frames);
      expect(decoder.schema!.features.map((f) => `${f.name}:${f.kind}`)).toEqual([
        'big:numeric',
        'half:numeric',
        'site:nominal',
      ]);
      // An integer label column holds class codes: the code is the integer, classes are named by it.
      expect(decoder.labelMode).toBe('code');
      expect(decoder.classes).toEqual(['0', '1', '2']);
      for (let r = 0; r < all.rows; r++) {
        const label = codes.columns.label![r];
        if (label === null) expect(all.labels![r]).toBeNaN();
        else expect(all.labels![r]).toBe(label);
        // uint64 values read as the nearest double, as JSON.parse reads the same digits.
        const big = codes.columns.big![r];
        if (big === null) expect(all.values[r * 3]).toBeNaN();
        else expect(all.values[r * 3]).toBe(big);
        const half = codes.columns.half![r];
        if (half === null) expect(all.values[r * 3 + 1]).toBeNaN();
        else expect(all.values[r * 3 + 1]).toBe(half);
        const site = codes.columns.site![r];
        if (site === null) expect(all.values[r * 3 + 2]).toBeNaN();
        else expect(decoder.categories('site')[all.values[r * 3 + 2]!]).toBe(site);
      }
    });
  }

  it('refuses a timestamp column as a feature, naming the column and its type', async () => {
    await expectShoalError(
      () => collect(readArrow(fixture('codes.arrow'), new FrameDecoder())),
      'invalid-input',
      /codes\.arrow/,
      /"seen_at"/,
      /Timestamp/,
      /exclude it/,
    );
  });

  const flat = expected('flat.expected.json');
  const FLAT = ['f64', 'f32', 'i8', 'i64', 'u32', 'flag', 'word'];

  it('takes the direct route only for a flat IPC stream (no dictionaries, not the file format)', () => {
    expect(DirectStream.open(readFileSync(fixture('flat.arrows')))).not.toBeNull();
    expect(DirectStream.open(readFileSync(fixture('events.arrows')))).toBeNull();
    expect(DirectStream.open(readFileSync(fixture('events.arrow')))).toBeNull();
  });

  it('decodes flat.arrows (sliced batches, nulls in every type) by the direct route to the values pyarrow wrote', async () => {
    const bytes = readFileSync(fixture('flat.arrows'));
    const direct = new FrameDecoder({ id: 'id' });
    const viaDirect = await collect(arrowBufferFrames(bytes, direct, 'flat'));
    const general = new FrameDecoder({ id: 'id' });
    const viaReader = await collect(readArrow(fixture('flat.arrows'), general));
    expect(viaDirect.frames.map((f) => f.rows)).toEqual(flat.batches);
    const all = concat(viaDirect.frames);
    const reference = concat(viaReader.frames);
    expect(sameDoubles(all.values, reference.values)).toBe(true);
    expect(sameDoubles(all.labels!, reference.labels!)).toBe(true);
    expect(all.ids).toEqual(flat.columns.id);
    expect(direct.schema).toEqual(general.schema);
    for (let r = 0; r < all.rows; r++) {
      FLAT.forEach((name, j) => {
        const want = flat.columns[name]![r];
        const got = all.values[r * FLAT.length + j]!;
        if (want === null || want === undefined) expect(got, `${name} row ${r}`).toBeNaN();
        else if (direct.schema!.features[j]!.kind === 'numeric') expect(got, `${name} row ${r}`).toBe(want);
        else expect(direct.categories(j)[got], `${name} row ${r}`).toBe(String(want));
      });
      const label = flat.columns.label![r];
      if (label === null) expect(all.labels![r]).toBeNaN();
      else expect(all.labels![r]).toBe(label);
    }
    const message = decodeArrowMessage(new FrameDecoder({ id: 'id' }), bytes, 'flat');
    expect(message.ok && sameDoubles(message.frame.values, all.values)).toBe(true);
  });
});

describe('Utf8 ids and labels', () => {
  it('are read as the strings Arrow JS gives for each cell: ASCII, empty, missing, long, multi-byte, a leading BOM', () => {
    // Reference: Apache Arrow JS's own reader (`Vector.get`), on a stream it wrote itself.
    const words = [
      'r1',
      'a-label-of-exactly-24-ch',
      'an-ascii-id-longer-than-twenty-four-bytes',
      'é',
      'naïve',
      'a long value that ends in a multi-byte char: ✓',
      '\uFEFFbom',
      '🐟',
      'r1',
    ];
    const labels = [...words, null, ''];
    const ids = [...words.map((w, i) => `${w}#${i}`), null, ''];
    const table = new Table({
      id: vectorFromArray(ids, new Utf8()),
      x: makeVector(Float64Array.from(ids, (_, i) => i)),
      label: vectorFromArray(labels, new Utf8()),
    });
    const bytes = tableToIPC(table, 'stream');
    const decoder = new FrameDecoder({ id: 'id' });
    const result = decodeArrowMessage(decoder, bytes, 'utf8');
    expect(result.ok).toBe(true);
    if (!result.ok) return;
    const idColumn = table.getChild('id')!;
    const labelColumn = table.getChild('label')!;
    // The rows without an id (missing, empty) are refused; the others carry Arrow's strings.
    expect(result.rejected.map((r) => r.index)).toEqual([9, 10]);
    for (let r = 0; r < words.length; r++) {
      expect(result.frame.ids![r], `id of row ${r}`).toBe(idColumn.get(r));
      expect(decoder.classes[result.frame.labels![r]!], `label of row ${r}`).toBe(labelColumn.get(r));
    }
    expect(decoder.classes).toEqual([...new Set(words.map((_, r) => labelColumn.get(r) as string))]);
  });
});
