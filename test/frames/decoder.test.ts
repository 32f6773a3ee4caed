import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import {
  Field,
  Float64,
  makeData,
  RecordBatch,
  RecordBatchStreamWriter,
  Schema,
  Struct,
  tableFromArrays,
  tableToIPC,
  vectorFromArray,
} from 'apache-arrow';
import { afterAll, describe, expect, it } from 'vitest';
import { readFrames } from '../../src/files/index.js';
import {
  cloneFrame,
  decodeArrowMessage,
  decodeJsonRecord,
  FrameDecoder,
  type FrameDecoderSnapshot,
} from '../../src/frames/index.js';
import { collect, expectShoalError, scratchDir } from './support.js';

/** The stream-level decoder: bounded vocabularies, the label dictionary, explicit specs, checkpoints. */
const scratch = scratchDir();
afterAll(() => scratch.remove());

function csv(name: string, text: string): string {
  const path = join(scratch.dir, name);
  writeFileSync(path, text);
  return path;
}

function records(decoder: FrameDecoder, list: readonly object[]): number[][] {
  return list.map((record, i) => {
    const result = decodeJsonRecord(decoder, record, 'r', i);
    if (!result.ok) throw new Error(result.reason);
    return [...Array.from(result.frame.values), ...(result.frame.labels ? [result.frame.labels[0]!] : [])];
  });
}

describe('bounded vocabularies', () => {
  it('codes categories in order of first appearance; the last code is the overflow bucket', async () => {
    const path = csv(
      'carriers.csv',
      'carrier,label\nGullwing,a\nPetrel,a\nGullwing,b\nSkua,a\nTern,b\nAuk,a\nPetrel,b\n',
    );
    const decoder = new FrameDecoder({ vocabulary: 4 });
    const { frames } = await collect(readFrames(path, decoder));
    expect(decoder.schema!.features[0]).toEqual({ name: 'carrier', kind: 'nominal', values: 4 });
    expect(Array.from(frames[0]!.values)).toEqual([0, 1, 0, 2, 3, 3, 1]);
    expect(decoder.categories('carrier')).toEqual(['Gullwing', 'Petrel', 'Skua']);
  });

  it('listed categories keep their codes; room beyond them is discovered, then overflows', () => {
    const decoder = new FrameDecoder({
      features: [{ name: 'product', kind: 'nominal', categories: ['dairy', 'frozen'], values: 4 }],
    });
    expect(decoder.schema).not.toBeNull();
    const rows = records(
      decoder,
      ['frozen', 'seafood', 'meat', 'dairy', 'produce'].map((product) => ({ product })),
    );
    expect(rows.map((r) => r[0])).toEqual([1, 2, 3, 0, 3]);
    expect(decoder.categories(0)).toEqual(['dairy', 'frozen', 'seafood']);
  });
});

describe('the label dictionary', () => {
  it('discovers string classes as they appear and exposes the growing list', () => {
    const decoder = new FrameDecoder();
    const rows = records(decoder, [
      { x: 1, label: 'ok' },
      { x: 2, label: 'spoiled' },
      { x: 3 },
      { x: 4, label: 'ok' },
    ]);
    expect(decoder.labelMode).toBe('name');
    expect(rows.map((r) => r[1])).toEqual([0, 1, Number.NaN, 0]);
    expect(decoder.classes).toEqual(['ok', 'spoiled']);
    records(decoder, [{ x: 5, label: 'held' }]);
    expect(decoder.classes).toEqual(['ok', 'spoiled', 'held']);
  });

  it('takes class names given up front, and refuses a class beyond maxClasses', () => {
    const decoder = new FrameDecoder({ classes: ['accepted', 'rejected'], maxClasses: 3 });
    expect(
      records(decoder, [
        { x: 1, label: 'rejected' },
        { x: 2, label: 'held' },
      ]).map((r) => r[1]),
    ).toEqual([1, 2]);
    const refused = decodeJsonRecord(decoder, { x: 3, label: 'lost' }, 'r', 9);
    expect(refused.ok && refused.rejected[0]!.reason).toBe(
      'r record 9: label "lost" would be class 4, more than maxClasses (3)',
    );
  });

  it('says to set task: regression when a full class list holds only numbers', () => {
    // Prices read as class names (the first label is past 1023, so not a class code) fill the list.
    const decoder = new FrameDecoder({ maxClasses: 3 });
    expect(
      records(decoder, [
        { x: 1, label: 1402 },
        { x: 2, label: 638.5 },
        { x: 3, label: 2210 },
      ]).length,
    ).toBe(3);
    const refused = decodeJsonRecord(decoder, { x: 4, label: 5364 }, 'r', 4);
    expect(refused.ok && refused.rejected[0]!.reason).toBe(
      'r record 4: label 5364 would be class 4, more than maxClasses (3); every label so far is a number: to predict numbers, set task: regression (--task regression)',
    );
  });

  it('reads a boolean label column as codes false = 0, true = 1', async () => {
    const path = csv('bool.csv', 'x,label\n1,true\n2,false\n3,\n');
    const decoder = new FrameDecoder();
    const { frames } = await collect(readFrames(path, decoder));
    expect(decoder.classes).toEqual(['false', 'true']);
    expect(Array.from(frames[0]!.labels!)).toEqual([1, 0, Number.NaN]);
  });

  it('leaves labels null when the default label column is absent; label: null makes it a feature', async () => {
    const path = csv('unlabelled.csv', 'x,label2\n1,4\n');
    const { frames } = await collect(readFrames(path, new FrameDecoder()));
    expect(frames[0]!.labels).toBeNull();
    const decoder = new FrameDecoder({ label: null });
    await collect(readFrames(csv('labelled.csv', 'x,label\n1,4\n'), decoder));
    expect(decoder.schema!.features.map((f) => f.name)).toEqual(['x', 'label']);
  });
});

describe('JSON records', () => {
  it('the first record fixes the columns; a later record may leave a key out (missing) or add one (ignored)', () => {
    const decoder = new FrameDecoder({ id: 'leg' });
    const first = decodeJsonRecord(
      decoder,
      '{"leg": 17, "temp": 4.5, "product": "dairy", "label": "ok"}',
      'r',
      0,
    );
    expect(first.ok && first.frame.ids).toEqual(['17']);
    const next = decodeJsonRecord(
      decoder,
      Buffer.from('{"leg": "L-2", "product": "meat", "extra": 1}'),
      'r',
      1,
    );
    expect(next.ok).toBe(true);
    if (!next.ok) return;
    expect(Array.from(next.frame.values)).toEqual([Number.NaN, 1]);
    expect(Array.from(next.frame.labels!)).toEqual([Number.NaN]);
    expect(next.frame.ids).toEqual(['L-2']);
    expect(next.frame.origin).toMatchObject({ source: 'r', unit: 'record' });
  });
});

describe('declared schemas (Arrow metadata written by Shoal)', () => {
  it('a declared feature list that is not valid is refused, naming the field', async () => {
    const field = new Field('x', new Float64(), true);
    const schema = new Schema(
      [field],
      new Map([['shoal.features', JSON.stringify([{ name: 'x', kind: 'vector' }])]]),
    );
    const data = makeData({
      type: new Struct([field]),
      length: 1,
      nullCount: 0,
      children: [vectorFromArray([1.5], new Float64()).data[0]!],
    });
    const writer = new RecordBatchStreamWriter();
    writer.write(new RecordBatch(schema, data));
    writer.finish();
    const path = join(scratch.dir, 'declared.arrows');
    writeFileSync(path, writer.toUint8Array(true));
    await expectShoalError(
      () => collect(readFrames(path, new FrameDecoder())),
      'invalid-input',
      /declared\.arrows: the declared features are not valid: features\[0\]\.kind: must be numeric or nominal/,
    );
  });
});

describe('checkpoints', () => {
  it('a restored decoder gives the same codes as the original for what follows', () => {
    const stream = [
      { leg: 'a', carrier: 'Petrel', temp: 1, label: 'ok' },
      { leg: 'b', carrier: 'Skua', temp: 2, label: 'late' },
      { leg: 'c', carrier: 'Auk', temp: 3, label: 'ok' },
    ];
    const later = [
      { leg: 'd', carrier: 'Tern', temp: 4, label: 'spoiled' },
      { leg: 'e', carrier: 'Skua', temp: 5, label: 'late' },
      { leg: 'f', carrier: 'Gull', temp: 6, label: 'ok' },
    ];
    const original = new FrameDecoder({ id: 'leg', vocabulary: 5 });
    records(original, stream);
    const state = JSON.parse(JSON.stringify(original.snapshot())) as FrameDecoderSnapshot;
    const restored = FrameDecoder.restore(state);
    expect(JSON.stringify(restored.snapshot())).toBe(JSON.stringify(original.snapshot()));
    expect(restored.schema).toEqual(original.schema);
    expect(restored.classes).toEqual(original.classes);
    expect(records(restored, later)).toEqual(records(original, later));
    expect(restored.categories('carrier')).toEqual(['Petrel', 'Skua', 'Auk', 'Tern']);
  });

  it('refuses a state of another version, or whose categories do not fit the features', async () => {
    const state = { ...new FrameDecoder().snapshot(), version: 99 };
    await expectShoalError(() => FrameDecoder.restore(state), 'invalid-snapshot', /version 99/);
    const decoder = new FrameDecoder({ vocabulary: 3 });
    records(decoder, [{ carrier: 'Auk' }]);
    const good = decoder.snapshot();
    const crowded = { ...good, state: { ...good.state, categories: [['Auk', 'Tern', 'Skua']] } };
    await expectShoalError(
      () => FrameDecoder.restore({ ...good, kind: 'learner' }),
      'invalid-snapshot',
      /expected a frame-decoder snapshot, got learner/,
    );
    await expectShoalError(() => FrameDecoder.restore(crowded), 'invalid-snapshot', /do not match/);
  });
});

describe('frames and their buffers', () => {
  it('frames share the decoder buffer; cloneFrame keeps a frame past the next decode', () => {
    const decoder = new FrameDecoder();
    const message = (x: number) => tableToIPC(tableFromArrays({ x: new Float64Array([x, x + 1]) }), 'stream');
    const first = decodeArrowMessage(decoder, message(10), 'm');
    if (!first.ok) throw new Error(first.reason);
    const kept = cloneFrame(first.frame);
    const second = decodeArrowMessage(decoder, message(20), 'm');
    if (!second.ok) throw new Error(second.reason);
    expect(Array.from(first.frame.values)).toEqual([20, 21]);
    expect(Array.from(kept.values)).toEqual([10, 11]);
    expect(second.frame.schema).toBe(first.frame.schema);
  });
});

describe('the labels decoder', () => {
  it('shares the events decoder’s class dictionary, so a class has one code in both inputs', () => {
    const events = new FrameDecoder({ label: 'outcome', id: 'leg' });
    const one = decodeJsonRecord(events, { leg: 'a', temp: 4.5, outcome: 'kept' });
    expect(one.ok).toBe(true);
    const labels = events.labelsDecoder({ id: 'leg', label: 'outcome' });
    // A frame views the decoder's buffers until its next decode: read each one before the next.
    const late = decodeJsonRecord(labels, { leg: 'a', outcome: 'rejected' });
    if (!late.ok) throw new Error(late.reason);
    expect(late.frame.width).toBe(0);
    expect(late.frame.ids).toEqual(['a']);
    // "rejected" was first named by the labels input: the events decoder knows it under the same code.
    expect(Array.from(late.frame.labels!)).toEqual([1]);
    const again = decodeJsonRecord(labels, { leg: 'b', outcome: 'kept' });
    expect(again.ok && Array.from(again.frame.labels!)).toEqual([0]);
    expect(events.classes).toEqual(['kept', 'rejected']);
    const back = decodeJsonRecord(events, { leg: 'c', temp: 5, outcome: 'rejected' });
    expect(back.ok && Array.from(back.frame.labels!)).toEqual([1]);
  });

  it('carries the events’ features and category codes, and a time column last, when asked', () => {
    const events = new FrameDecoder({ label: 'y', id: 'id' });
    decodeJsonRecord(events, { id: '1', carrier: 'Polar Haul', temp: 3, y: 0 });
    const labels = events.labelsDecoder({ id: 'id', label: 'y', carryFeatures: true, time: 'known' });
    const decoded = decodeJsonRecord(labels, { id: '9', carrier: 'Polar Haul', temp: 7, known: 12, y: 1 });
    if (!decoded.ok) throw new Error(decoded.reason);
    expect(Array.from(decoded.frame.values)).toEqual([0, 7, 12]);
    expect(() =>
      new FrameDecoder({ id: 'id' }).labelsDecoder({ id: 'id', label: 'y', carryFeatures: true }),
    ).toThrow(/schema is not known yet/);
  });
});
