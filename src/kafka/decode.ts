import type { FeatureSchema } from '../core/index.js';
import {
  decodeArrowMessage,
  decodeJsonRecord,
  type Frame,
  type FrameDecoder,
  type MessageDecode,
} from '../frames/index.js';
import type { SourceBatch } from '../pipeline/index.js';
import type { EventFormat } from './config.js';

/**
 * One fetched Kafka batch (the messages of one topic-partition) → one frame of every row that decoded,
 * plus a dead letter for every message or row that did not. Each message is an Arrow IPC stream (one or
 * more record batches) or NDJSON (one record per line); a `content-type` header chooses, else the
 * configured format. Rows are copied from the decoder's buffers into buffers this object owns and reuses
 * (grown by doubling), so the frame stays valid until the next `decode`.
 */

/** Why an input went to the dead letters; the value of the `shoal-reason` header. */
export type DeadLetterCode =
  | 'empty'
  | 'oversize'
  | 'unsupported-content-type'
  | 'undecodable'
  | 'schema-mismatch'
  | 'missing-id'
  | 'bad-label'
  | 'bad-value';

export interface DeadLetter {
  readonly topic: string;
  readonly partition: number;
  readonly offset: string;
  readonly code: DeadLetterCode;
  /** What was wrong and where (topic/partition@offset, row or line). */
  readonly reason: string;
  /** The original message value (null when the message had none). */
  readonly bytes: Buffer | null;
  readonly headers: Readonly<Record<string, string>>;
}

/**
 * The rows of one fetched batch, a `SourceBatch` of the session's ports: `stream` is `topic/partition`,
 * `positions` the Kafka offset of each row, `next` the last offset + 1. Rows and messages that did not
 * decode are dead letters (with their bytes and headers) rather than `rejected` entries.
 */
export interface EventBatch extends SourceBatch {
  /** Each row's message timestamp (ms since 1970). */
  readonly eventTimes: Float64Array;
}

/** The parts of a kafkajs message this decoder reads. */
export interface RawMessage {
  readonly offset: string;
  readonly timestamp: string;
  readonly value: Buffer | null;
  readonly headers?: Readonly<Record<string, Buffer | string | (Buffer | string)[] | undefined>>;
}

export const CONTENT_TYPE_HEADER = 'content-type';
const CONTENT_TYPES: Readonly<Record<string, EventFormat>> = {
  'application/vnd.apache.arrow.stream': 'arrow',
  'application/x-ndjson': 'ndjson',
  'application/json': 'ndjson',
};

export class BatchDecoder {
  private values = new Float64Array(0);
  private labels = new Float64Array(0);
  private positions = new BigInt64Array(0);
  private times = new Float64Array(0);
  private ids: string[] = [];
  private rows = 0;
  private hasLabels = false;
  private hasIds = false;

  constructor(
    private readonly decoder: FrameDecoder,
    private readonly format: EventFormat,
    private readonly maxBytes: number,
  ) {}

  /**
   * Decode the messages of one topic-partition batch. Returns null for the frame when no row decoded
   * (every message went to the dead letters, or the batch was empty).
   */
  decode(
    topic: string,
    partition: number,
    messages: readonly RawMessage[],
    dead: DeadLetter[],
  ): EventBatch | null {
    this.rows = 0;
    this.hasLabels = false;
    this.hasIds = false;
    this.ids.length = 0;
    let next = -1n;
    for (const m of messages) {
      next = BigInt(m.offset) + 1n;
      const where = `${topic}/${partition}@${m.offset}`;
      const letter = (code: DeadLetterCode, reason: string, bytes = m.value): void => {
        dead.push({ topic, partition, offset: m.offset, code, reason, bytes, headers: textHeaders(m) });
      };
      if (m.value === null || m.value.length === 0) {
        letter('empty', `${where}: the message has no value`);
        continue;
      }
      if (m.value.length > this.maxBytes) {
        letter(
          'oversize',
          `${where}: ${m.value.length} bytes, more than maxMessageBytes (${this.maxBytes}); the value is not kept`,
          null,
        );
        continue;
      }
      const format = this.formatOf(m);
      if (format === null) {
        const shown = JSON.stringify(header(m, CONTENT_TYPE_HEADER));
        letter(
          'unsupported-content-type',
          `${where}: content-type ${shown} is neither Arrow IPC stream nor NDJSON`,
        );
        continue;
      }
      const time = Number(m.timestamp);
      if (format === 'arrow') {
        this.take(decodeArrowMessage(this.decoder, m.value, where), m.offset, time, letter);
        continue;
      }
      const lines = m.value.toString('utf8').split('\n');
      for (let i = 0; i < lines.length; i++) {
        const line = lines[i]!;
        if (line.trim() === '') continue;
        const bytes = lines.length === 1 ? m.value : Buffer.from(line, 'utf8');
        this.take(decodeJsonRecord(this.decoder, line, where, i + 1), m.offset, time, (code, reason) =>
          letter(code, reason, bytes),
        );
      }
    }
    if (this.rows === 0 || this.decoder.schema === null) return null;
    return {
      frame: this.frame(this.decoder.schema),
      rejected: [],
      stream: `${topic}/${partition}`,
      positions: this.positions.subarray(0, this.rows),
      eventTimes: this.times.subarray(0, this.rows),
      next,
    };
  }

  private formatOf(m: RawMessage): EventFormat | null {
    const type = header(m, CONTENT_TYPE_HEADER);
    if (type === null) return this.format;
    return CONTENT_TYPES[type.split(';')[0]!.trim().toLowerCase()] ?? null;
  }

  /** Copy a decoded message's rows (they live in the decoder's buffers) to the end of this batch. */
  private take(
    result: MessageDecode,
    offset: string,
    time: number,
    letter: (code: DeadLetterCode, reason: string) => void,
  ): void {
    if (!result.ok) {
      const unreadable = /not an Arrow IPC message|not valid JSON|expected a JSON object/.test(result.reason);
      letter(unreadable ? 'undecodable' : 'schema-mismatch', result.reason);
      return;
    }
    for (const r of result.rejected) letter(rowCode(r.reason), r.reason);
    const f = result.frame;
    if (f.rows === 0) return;
    const width = f.width;
    const start = this.rows;
    this.reserve(start + f.rows, width);
    this.values.set(f.values.subarray(0, f.rows * width), start * width);
    if (f.labels !== null) {
      if (!this.hasLabels) this.labels.fill(Number.NaN, 0, start);
      this.hasLabels = true;
      this.labels.set(f.labels.subarray(0, f.rows), start);
    } else if (this.hasLabels) {
      this.labels.fill(Number.NaN, start, start + f.rows);
    }
    if (f.ids !== null) {
      this.hasIds = true;
      for (let r = 0; r < f.rows; r++) this.ids[start + r] = f.ids[r]!;
    }
    const at = BigInt(offset);
    this.positions.fill(at, start, start + f.rows);
    this.times.fill(time, start, start + f.rows);
    this.rows += f.rows;
  }

  private frame(schema: FeatureSchema): Frame {
    const width = schema.features.length;
    const rows = this.rows;
    return {
      schema,
      rows,
      width,
      values: this.values.subarray(0, rows * width),
      labels: this.hasLabels ? this.labels.subarray(0, rows) : null,
      ids: this.hasIds ? this.ids : null,
      origin: { source: 'kafka', unit: 'record', batch: -1, positions: new Int32Array(0) },
    };
  }

  private reserve(rows: number, width: number): void {
    if (this.values.length < rows * width) this.values = grow(this.values, rows * width);
    if (this.labels.length < rows) {
      this.labels = grow(this.labels, rows);
      this.times = grow(this.times, rows);
      const positions = new BigInt64Array(this.labels.length);
      positions.set(this.positions);
      this.positions = positions;
    }
  }
}

function grow(old: Float64Array, needed: number): Float64Array<ArrayBuffer> {
  let size = Math.max(16, old.length);
  while (size < needed) size *= 2;
  const next = new Float64Array(size);
  next.set(old);
  return next;
}

/** The reason code of a row the decoder refused (its message says which part of the row was wrong). */
function rowCode(reason: string): DeadLetterCode {
  if (/: no id in column /.test(reason)) return 'missing-id';
  if (/: label /.test(reason)) return 'bad-label';
  return 'bad-value';
}

function header(m: RawMessage, name: string): string | null {
  const v = m.headers?.[name];
  if (v === undefined) return null;
  const first = Array.isArray(v) ? v[0] : v;
  return first === undefined ? null : first.toString();
}

function textHeaders(m: RawMessage): Record<string, string> {
  const out: Record<string, string> = {};
  for (const [k, v] of Object.entries(m.headers ?? {})) {
    if (v === undefined) continue;
    out[k] = (Array.isArray(v) ? v[0]! : v).toString();
  }
  return out;
}
