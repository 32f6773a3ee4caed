import { createHash } from 'node:crypto';
import { describe, expect, inject, it } from 'vitest';
import { encodeCheckpoint, type RunCheckpoint, runCheckpoint } from '../../src/checkpoint/index.js';
import { KafkaCheckpointStore } from '../../src/kafka/index.js';
import { uniqueName } from '../support/kafka-names.js';
import { client, quietLogger } from '../support/kafka-serve.js';

/** A checkpoint of about `bytes` bytes (its session part is opaque to the store). */
function checkpoint(n: number, bytes: number): RunCheckpoint {
  return runCheckpoint(
    { decoder: { n }, session: { n, filler: 'x'.repeat(bytes) }, labelTiming: null },
    { shoal: 'test', fingerprint: 'f'.repeat(64), createdAt: new Date(0).toISOString() },
  );
}

describe('the Kafka checkpoint store (real broker)', () => {
  it('keeps checkpoints on a compacted topic in chunks, the manifest last; a save without its manifest is ignored', async () => {
    const brokers = inject('kafkaBrokers');
    const topic = uniqueName('checkpoints');
    const kafka = client(brokers);
    const store = new KafkaCheckpointStore(
      kafka,
      { topic, pipeline: 'legs', chunkBytes: 4096 },
      quietLogger(),
    );
    await store.connect();
    try {
      const admin = kafka.admin();
      await admin.connect();
      const described = await admin.describeConfigs({
        resources: [{ type: 2, name: topic, configNames: ['cleanup.policy', 'segment.ms'] }],
        includeSynonyms: false,
      });
      await admin.disconnect();
      const config = new Map(described.resources[0]!.configEntries.map((e) => [e.configName, e.configValue]));
      // A compacted topic keeps the newest value of each key (Kafka's log compaction, cleanup.policy), and
      // the cleaner only compacts rolled segments (Kafka's topic configuration docs, segment.ms).
      expect(config.get('cleanup.policy')).toBe('compact');
      expect(Number(config.get('segment.ms'))).toBeLessThanOrEqual(3_600_000);

      expect(await store.scope('legs/0').latest()).toBeNull();
      await store.scope('legs/0').save(checkpoint(1, 20_000));
      await store.scope('legs/1').save(checkpoint(10, 100));
      const second = checkpoint(2, 30_000);
      const where = await store.scope('legs/0').save(second);
      const third = checkpoint(3, 30_000);
      expect(where).toContain('legs/0 #1');
      const fresh = new KafkaCheckpointStore(
        kafka,
        { topic, pipeline: 'legs', chunkBytes: 4096 },
        quietLogger(),
      );
      await fresh.connect();
      try {
        expect((await fresh.scope('legs/0').latest())!.checkpoint).toEqual(second);
        // A later read starts where the last one ended: legs/1's one chunk, read before but not kept, is
        // read again from its own offset, and nothing else.
        let before = fresh.recordsRead;
        expect((await fresh.scope('legs/1').latest())!.checkpoint).toEqual(checkpoint(10, 100));
        expect(fresh.recordsRead - before).toBe(1);
        expect(await fresh.scope('other/0').latest()).toBeNull();
        // A new save of legs/0 (its chunks of 4,096 bytes and a manifest) is all a reader reads next.
        await store.scope('legs/0').save(third);
        before = fresh.recordsRead;
        expect((await fresh.scope('legs/0').latest())!.checkpoint).toEqual(third);
        expect(fresh.recordsRead - before).toBe(Math.ceil(encodeCheckpoint(third).length / 4096) + 1);
      } finally {
        await fresh.disconnect();
      }

      // A save cut short after its chunks: the chunk records of the next save (sequence 3, into the slot
      // the manifest does not point at) are on the topic, its manifest is not.
      const producer = kafka.producer();
      await producer.connect();
      const key = (...rest: (string | number)[]) =>
        JSON.stringify(['shoal-checkpoint', 'legs', 'legs/0', ...rest]);
      await producer.send({
        topic,
        messages: [0, 1, 2].map((i) => ({
          key: key('chunk', 1, i),
          value: Buffer.alloc(4096, 7),
          headers: { 'shoal-sequence': '3' },
        })),
      });
      expect((await store.scope('legs/0').latest())!.checkpoint).toEqual(third);

      // A manifest whose chunks do not add up (another writer's bytes) is refused, naming the checkpoint.
      const bogus = Buffer.alloc(10, 1);
      await producer.send({
        topic,
        messages: [
          { key: key('chunk', 1, 0), value: bogus, headers: { 'shoal-sequence': '3' } },
          {
            key: key('manifest'),
            value: JSON.stringify({
              sequence: 3,
              slot: 1,
              chunks: 1,
              bytes: 10,
              sha256: createHash('sha256').update('something else').digest('hex'),
              createdAt: '',
            }),
            headers: { 'shoal-sequence': '3' },
          },
        ],
      });
      await producer.disconnect();
      await expect(store.scope('legs/0').latest()).rejects.toThrow(/legs\/0 #3: its chunks hold 10 bytes/);
    } finally {
      await store.disconnect();
    }
  });
});
