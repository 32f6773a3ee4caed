import {
  type Data,
  Field,
  Float64,
  Int32,
  makeData,
  RecordBatch,
  Schema,
  Struct,
  Table,
  TimestampMillisecond,
  tableToIPC,
  Utf8,
} from 'apache-arrow';

/**
 * Scores as one Arrow IPC stream (schema + one record batch), the value of a message on the scores
 * topic. Columns: `id` (utf8, null without an id column), one `p_<class>` float64 per known class (class
 * probabilities), `predicted` (utf8 class name, null before any class is known), `agreement` (float64, share of voting members that
 * agree), `voters` (int32, active members that voted), `epoch` (int32, seat replacements that served the
 * row), `event_time` (timestamp ms, the event message's time) and `latency_ms` (float64, from the event's
 * time to its score). Readable by any Arrow implementation (the tests read it back with pyarrow).
 *
 * @example
 * producer.send({ topic: 'legs-scores', messages: [{ value: Buffer.from(encodeScores(scores, eventTimes)) }] });
 */
export interface ScoreRows {
  /** Row r of these scores is row `first + r` of the frame scored (of `ids` and `eventTimes`). */
  readonly first: number;
  /** Rows scored. */
  readonly rows: number;
  /** Class names, index = class code (the probabilities' stride is their count, at least 1). */
  readonly classes: readonly string[];
  /** The frame's event ids, or null when it has none. */
  readonly ids: readonly string[] | null;
  /** rows × stride, row-major. */
  readonly probabilities: Float64Array;
  /** Predicted class code per row. */
  readonly predicted: Int32Array;
  /** The number a regression predicted per row (NaN in a classification; not on the scores topic yet). */
  readonly values: Float64Array;
  /** Share of voting members that agree with the prediction, per row. */
  readonly agreement: Float64Array;
  /** Members that voted, per row. */
  readonly voters: Int32Array;
  /** Model epoch (seat replacements so far) that served each row. */
  readonly epoch: Int32Array;
  /** The session's time (`Clock.event`, ms) at which the rows were scored. */
  readonly scoredAt: number;
}

export const SCORES_CONTENT_TYPE = 'application/vnd.apache.arrow.stream';

/**
 * Rows [from, to) of the scores (so that a large batch can go out in several messages); `eventTimes`
 * holds each frame row's event time (ms since 1970), indexed like the frame.
 */
export function encodeScores(s: ScoreRows, eventTimes: Float64Array, from = 0, to = s.rows): Uint8Array {
  const n = to - from;
  const k = s.classes.length;
  const stride = Math.max(1, k);
  const at = s.first + from;
  const fields: Field[] = [new Field('id', new Utf8(), true)];
  const ids = s.ids;
  const columns: Data[] = [utf8Data(n, ids === null ? () => null : (r) => ids[at + r]!)];
  for (let c = 0; c < k; c++) {
    const p = new Float64Array(n);
    for (let r = 0; r < n; r++) p[r] = s.probabilities[(from + r) * stride + c]!;
    fields.push(new Field(`p_${s.classes[c]}`, new Float64(), false));
    columns.push(makeData({ type: new Float64(), length: n, data: p }));
  }
  const latency = new Float64Array(n);
  const times = new Float64Array(n);
  for (let r = 0; r < n; r++) {
    times[r] = eventTimes[at + r]!;
    latency[r] = s.scoredAt - times[r]!;
  }
  fields.push(
    new Field('predicted', new Utf8(), true),
    new Field('agreement', new Float64(), false),
    new Field('voters', new Int32(), false),
    new Field('epoch', new Int32(), false),
    new Field('event_time', new TimestampMillisecond(), false),
    new Field('latency_ms', new Float64(), false),
  );
  columns.push(
    utf8Data(n, (r) => s.classes[s.predicted[from + r]!] ?? null),
    makeData({ type: new Float64(), length: n, data: s.agreement.slice(from, to) }),
    makeData({ type: new Int32(), length: n, data: s.voters.slice(from, to) }),
    makeData({ type: new Int32(), length: n, data: s.epoch.slice(from, to) }),
    makeData({
      type: new TimestampMillisecond(),
      length: n,
      data: int64Millis(times),
    }),
    makeData({ type: new Float64(), length: n, data: latency }),
  );
  const schema = new Schema(fields);
  const struct = makeData({ type: new Struct(fields), length: n, children: columns });
  return tableToIPC(new Table(schema, [new RecordBatch(schema, struct)]), 'stream');
}

const utf8 = new TextEncoder();
const TWO_32 = 2 ** 32;

/**
 * Whole milliseconds as Arrow's int64 values, each written as its low and high 32-bit words (low first:
 * little-endian, the byte order of the IPC stream and of the hosts Node runs on here), since a BigInt per
 * row cost some 130 µs per 1,000 rows against 20 µs. Exact for every time a `Date` can hold
 * (|t| ≤ 8.64·10¹⁵ < 2⁵³); the high word is the floor of t / 2³², so times before 1970 come out in
 * two's complement.
 */
function int64Millis(times: Float64Array): BigInt64Array {
  const words = new Int32Array(2 * times.length);
  for (let r = 0; r < times.length; r++) {
    const t = Math.round(times[r]!);
    const high = Math.floor(t / TWO_32);
    words[2 * r] = t - high * TWO_32;
    words[2 * r + 1] = high;
  }
  return new BigInt64Array(words.buffer);
}

/**
 * A utf8 column of `n` values (`text(r)`, null for a missing one) built directly as Arrow's offsets and
 * bytes: one encoding of all the values joined, where building the column value by value spent more time
 * than scoring a row (a fifth of `serve`'s model side, measured on 2 December). When every value is ASCII,
 * one byte per UTF-16 unit, the offsets follow from the strings' lengths; otherwise each value's encoded
 * length is measured.
 */
function utf8Data(n: number, text: (r: number) => string | null): Data<Utf8> {
  const parts = new Array<string>(n);
  let nulls = 0;
  for (let r = 0; r < n; r++) {
    const t = text(r);
    if (t === null) nulls++;
    parts[r] = t ?? '';
  }
  const joined = parts.join('');
  const bytes = utf8.encode(joined);
  const ascii = bytes.length === joined.length;
  const offsets = new Int32Array(n + 1);
  let end = 0;
  for (let r = 0; r < n; r++) {
    offsets[r] = end;
    end += ascii ? parts[r]!.length : utf8.encode(parts[r]!).length;
  }
  offsets[n] = end;
  if (nulls === 0) return makeData({ type: new Utf8(), length: n, valueOffsets: offsets, data: bytes });
  const valid = new Uint8Array((n + 7) >> 3);
  for (let r = 0; r < n; r++) if (text(r) !== null) valid[r >> 3]! |= 1 << (r & 7);
  return makeData({
    type: new Utf8(),
    length: n,
    nullCount: nulls,
    nullBitmap: valid,
    valueOffsets: offsets,
    data: bytes,
  });
}
