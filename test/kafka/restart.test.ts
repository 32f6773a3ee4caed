import {
  KafkaJSConnectionError,
  KafkaJSGroupCoordinatorNotFound,
  KafkaJSNonRetriableError,
  KafkaJSNotImplemented,
  KafkaJSNumberOfRetriesExceeded,
} from 'kafkajs';
import { describe, expect, it } from 'vitest';
import { restartsAfter } from '../../src/kafka/index.js';

/** kafkajs's types declare some error constructors without the message its code reads. */
function made(kind: new () => Error, message: string): Error {
  return new (kind as unknown as new (m: string) => Error)(message);
}

/**
 * Which crashes the consumer restarts after, judged on the error classes kafkajs itself throws (the
 * library's `errors` module): a broker that is away must never end the service, a batch no codec can
 * read must.
 */
describe('the consumer restarts', () => {
  it('after a broker that is away, however kafkajs wraps it', () => {
    // kafkajs's cluster throws this, with no cause, when no broker answered the coordinator lookup.
    expect(restartsAfter(made(KafkaJSGroupCoordinatorNotFound, 'Failed to find group coordinator'))).toBe(
      true,
    );
    expect(restartsAfter(new KafkaJSConnectionError('Connection error: connect ECONNREFUSED'))).toBe(true);
    const refused = new KafkaJSConnectionError('Connection error: connect ECONNREFUSED 127.0.0.1:9092');
    const spent = new KafkaJSNumberOfRetriesExceeded(refused, { retryCount: 5, retryTime: 3000 });
    expect(restartsAfter(new KafkaJSNonRetriableError(spent))).toBe(true);
  });

  it('never after a batch that will fail again', () => {
    expect(restartsAfter(made(KafkaJSNotImplemented, 'Snappy compression not implemented'))).toBe(false);
    expect(
      restartsAfter(new KafkaJSNonRetriableError('the events topic holds a record the schema refuses')),
    ).toBe(false);
    expect(restartsAfter(new Error('a handler threw'))).toBe(false);
  });
});
