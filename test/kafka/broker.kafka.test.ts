import { Kafka, logLevel } from 'kafkajs';
import { describe, expect, inject, it } from 'vitest';
import { KafkaBroker } from '../support/kafka-broker.js';
import { uniqueName } from '../support/kafka-names.js';
import { note } from '../support/note.js';

/** The harness itself: the shared broker answers, and a private one keeps its data across stop and restart. */

async function roundTrip(brokers: string, topic: string, values: string[]): Promise<void> {
  const kafka = new Kafka({ clientId: 'harness-test', brokers: [brokers], logLevel: logLevel.NOTHING });
  const admin = kafka.admin();
  await admin.connect();
  await admin.createTopics({ topics: [{ topic, numPartitions: 1 }], waitForLeaders: true });
  await admin.disconnect();
  const producer = kafka.producer();
  await producer.connect();
  await producer.send({ topic, messages: values.map((value) => ({ value })) });
  await producer.disconnect();
}

async function readAll(brokers: string, topic: string, count: number): Promise<string[]> {
  const kafka = new Kafka({ clientId: 'harness-test', brokers: [brokers], logLevel: logLevel.NOTHING });
  const consumer = kafka.consumer({ groupId: uniqueName('harness'), maxWaitTimeInMs: 500 });
  await consumer.connect();
  await consumer.subscribe({ topic, fromBeginning: true });
  const seen: string[] = [];
  await new Promise<void>((done) => {
    void consumer.run({
      eachMessage: async ({ message }) => {
        seen.push(message.value!.toString());
        if (seen.length >= count) done();
      },
    });
  });
  await consumer.disconnect();
  return seen;
}

describe('Kafka broker harness', () => {
  it('gives the tests a broker that stores and returns messages', async () => {
    const brokers = inject('kafkaBrokers');
    const topic = uniqueName('harness');
    await roundTrip(brokers, topic, ['a', 'b', 'c']);
    expect(await readAll(brokers, topic, 3)).toEqual(['a', 'b', 'c']);
  });

  it('stops a broker and restarts it on the same port with its data', async () => {
    const broker = await KafkaBroker.start();
    try {
      note(`private broker started in ${Math.round(broker.startMillis)} ms`);
      const topic = uniqueName('restart');
      await roundTrip(broker.bootstrap, topic, ['before']);
      await broker.stop();
      expect(broker.running).toBe(false);
      await broker.restart();
      note(`restarted in ${Math.round(broker.startMillis)} ms`);
      expect(await readAll(broker.bootstrap, topic, 1)).toEqual(['before']);
    } finally {
      await broker.destroy();
    }
  });
});
