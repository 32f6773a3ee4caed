import { makeVector, Table, tableToIPC, Utf8, vectorFromArray } from 'apache-arrow';
import type { FetchedBatch } from '../../src/kafka/index.js';
import { benchStream } from './stream.js';

/**
 * The benchmark stream of `stream.ts` as Kafka event values: one Arrow IPC stream per 1,000 rows (the
 * form `shoal serve` reads), with columns `id` (`r<n>`), `x0` … `x9` (float64) and the inline `label`
 * (`"0"` or `"1"`). `rows` and `labels` are the same rows in memory, for in-process figures.
 *
 * @example
 * const { messages } = eventMessages(200_000, 'bench-serve');
 * await producer.send({ topic, messages: messages.map((value) => ({ value })) });
 */
export const ROWS_PER_MESSAGE = 1000;

export interface EventMessages {
  readonly messages: Buffer[];
  readonly rows: Float64Array;
  readonly labels: Int32Array;
  readonly width: number;
}

export function eventMessages(count: number, seed: string, perMessage = ROWS_PER_MESSAGE): EventMessages {
  const { rows, labels, width } = benchStream(count, seed);
  const messages: Buffer[] = [];
  for (let from = 0; from < count; from += perMessage) {
    const to = Math.min(count, from + perMessage);
    const columns: Record<string, ReturnType<typeof makeVector>> = {
      id: vectorFromArray(
        Array.from({ length: to - from }, (_, i) => `r${from + i}`),
        new Utf8(),
      ),
    };
    for (let j = 0; j < width; j++) {
      const column = new Float64Array(to - from);
      for (let r = from; r < to; r++) column[r - from] = rows[r * width + j]!;
      columns[`x${j}`] = makeVector(column);
    }
    columns.label = vectorFromArray(
      Array.from(labels.subarray(from, to), (l) => String(l)),
      new Utf8(),
    );
    messages.push(Buffer.from(tableToIPC(new Table(columns), 'stream')));
  }
  return { messages, rows, labels, width };
}

/**
 * Messages `[from, to)` as the raw messages of one fetched batch (offset = index, timestamp `now`), for
 * running the service's model side without a broker.
 */
export function rawBatch(
  messages: readonly Buffer[],
  from: number,
  to: number,
  now: number,
): FetchedBatch['messages'][number][] {
  const out: FetchedBatch['messages'][number][] = [];
  for (let i = from; i < to; i++)
    out.push({ offset: String(i), timestamp: String(now), value: messages[i]! });
  return out;
}
