import type { Message } from 'kafkajs';
import type { DeadLetter } from './decode.js';

/**
 * The service's output messages. Dead letters keep the original value and headers and add
 * `shoal-reason` (the code), `shoal-source-topic`, `shoal-source-partition`, `shoal-source-offset` and
 * `shoal-message` (what was wrong, for people). Scores are keyed by their source stream
 * (`topic/partition`), so one partition's scores stay in order.
 */

export function deadLetterMessage(d: DeadLetter): Message {
  return {
    key: `${d.topic}/${d.partition}`,
    value: d.bytes,
    headers: {
      ...d.headers,
      'shoal-reason': d.code,
      'shoal-source-topic': d.topic,
      'shoal-source-partition': String(d.partition),
      'shoal-source-offset': d.offset,
      'shoal-message': d.reason,
    },
  };
}

export function scoresMessage(stream: string, ipc: Uint8Array, contentType: string): Message {
  return {
    key: stream,
    value: Buffer.from(ipc.buffer, ipc.byteOffset, ipc.byteLength),
    headers: { 'content-type': contentType },
  };
}

/** One journal record as a JSON message keyed by the scope it belongs to (`global` or a stream). */
export function journalMessage(scope: string, record: unknown): Message {
  return { key: scope, value: JSON.stringify(record), headers: { 'content-type': 'application/json' } };
}
