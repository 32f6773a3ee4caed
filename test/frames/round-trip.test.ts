import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { FeatureSchema } from '../../src/core/index.js';
import { createWriter, readFrames } from '../../src/files/index.js';
import { type FeatureSpec, FrameDecoder, type FrameFormat } from '../../src/frames/index.js';
import { type StreamGenerator, sea, stagger, take } from '../../src/streams/index.js';
import { collect, concat, expectShoalError, sameDoubles, scratchDir } from './support.js';

/**
 * Round trip: Shoal's writers → Shoal's readers give identical frames, bit for bit, for the published
 * SEA (Street & Kim 2001) and STAGGER (Schlimmer & Granger 1986) streams, with missing values and
 * missing labels mixed in. The Arrow file carries its own feature and class list in its schema
 * metadata; CSV and NDJSON are read with the generator's schema given as the feature spec.
 */
const scratch = scratchDir();
afterAll(() => scratch.remove());

const ROWS = 12_000;

function specOf(schema: FeatureSchema): FeatureSpec[] {
  return schema.features.map((f) =>
    f.kind === 'numeric'
      ? { name: f.name, kind: 'numeric' }
      : { name: f.name, kind: 'nominal', categories: f.categories! },
  );
}

interface RowsWithGaps {
  readonly width: number;
  readonly values: Float64Array;
  readonly labels: Float64Array;
  readonly ids: string[];
}

/** A generator's rows with some values and labels made missing, and an id per row. */
function rowsWithGaps(generator: StreamGenerator): RowsWithGaps {
  const block = take(generator, ROWS);
  const values = block.rows.slice();
  for (let r = 0; r < ROWS; r += 97) values[r * block.width + (r % block.width)] = Number.NaN;
  const labels = Float64Array.from(block.labels, (l, r) => (r % 101 === 50 ? Number.NaN : l));
  const ids = Array.from({ length: ROWS }, (_, r) => `ev-${r}`);
  return { width: block.width, values, labels, ids };
}

async function writeInBlocks(
  path: string,
  format: FrameFormat,
  generator: StreamGenerator,
  data: RowsWithGaps,
  labels: 'name' | 'code',
): Promise<void> {
  const writer = await createWriter(
    path,
    { schema: generator.schema, classes: generator.classes, id: 'event', labels },
    format,
  );
  // Uneven blocks, so that record batches and blocks do not line up.
  const cuts = [0, 1, 4_999, 7_321, 10_000, ROWS];
  const w = data.width;
  for (let k = 0; k + 1 < cuts.length; k++) {
    const [a, b] = [cuts[k]!, cuts[k + 1]!];
    await writer.write({
      rows: b - a,
      values: data.values.subarray(a * w, b * w),
      labels: data.labels.subarray(a, b),
      ids: data.ids.slice(a, b),
    });
  }
  await writer.close();
  expect(writer.rowsWritten).toBe(ROWS);
}

describe('our writers → our readers', () => {
  const generators: readonly [string, () => StreamGenerator][] = [
    ['SEA', () => sea({ threshold: 8, noise: 0.1 }, 3)],
    ['STAGGER', () => stagger({ concept: 'b' }, 4)],
  ];
  for (const format of ['arrow', 'csv', 'ndjson'] as const) {
    for (const [name, make] of generators) {
      for (const labels of ['name', 'code'] as const) {
        it(`${format}: ${name} rows, labels as ${labels}s, come back identical`, async () => {
          const generator = make();
          const data = rowsWithGaps(generator);
          const path = join(scratch.dir, `${name}-${labels}.${format}`);
          await writeInBlocks(path, format, generator, data, labels);
          const decoder =
            format === 'arrow'
              ? new FrameDecoder({ id: 'event' })
              : new FrameDecoder({
                  id: 'event',
                  features: specOf(generator.schema),
                  classes: generator.classes,
                });
          const { frames, rejected } = await collect(readFrames(path, decoder));
          expect(rejected).toEqual([]);
          // The Arrow writer cuts record batches of 10,000 rows by default.
          if (format === 'arrow') expect(frames.map((f) => f.rows)).toEqual([10_000, 2_000]);
          expect(decoder.schema).toEqual(generator.schema);
          expect(decoder.classes).toEqual(generator.classes);
          const all = concat(frames);
          expect(all.rows).toBe(ROWS);
          expect(sameDoubles(all.values, data.values)).toBe(true);
          expect(sameDoubles(all.labels!, data.labels)).toBe(true);
          expect(all.ids!.join('|')).toBe(data.ids.join('|'));
        });
      }
    }
  }

  it('an Arrow file read with a different feature spec decodes its categories by name', async () => {
    const generator = stagger({ concept: 'a' }, 9);
    const data = rowsWithGaps(generator);
    const path = join(scratch.dir, 'stagger-inferred.arrow');
    await writeInBlocks(path, 'arrow', generator, data, 'name');
    // Explicit numeric/nominal kinds without categories override the file's own metadata.
    const decoder = new FrameDecoder({
      id: 'event',
      features: generator.schema.features.map((f) => ({ name: f.name, kind: f.kind, values: 8 })),
    });
    const { frames } = await collect(readFrames(path, decoder));
    const all = concat(frames);
    for (let r = 0; r < 200; r++) {
      for (let j = 0; j < 3; j++) {
        const code = data.values[r * 3 + j]!;
        const back = all.values[r * 3 + j]!;
        if (Number.isNaN(code)) expect(back).toBeNaN();
        else expect(decoder.categories(j)[back]).toBe(generator.schema.features[j]!.categories![code]);
      }
    }
  });

  it('refuses to write a nominal code or a label code outside the schema', async () => {
    const generator = stagger({}, 1);
    const writer = await createWriter(join(scratch.dir, 'bad.csv'), {
      schema: generator.schema,
      classes: generator.classes,
    });
    await expectShoalError(
      () => writer.write({ rows: 1, values: new Float64Array([0, 3, 0]), labels: [0] }),
      'invalid-row',
      /bad\.csv/,
      /"color" has code 3/,
    );
    await expectShoalError(
      () => writer.write({ rows: 1, values: new Float64Array([0, 1, 0]), labels: [2] }),
      'invalid-label',
      /label 2 is not a class code/,
    );
    await writer.close();
  });
});
