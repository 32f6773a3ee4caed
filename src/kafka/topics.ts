import type { Kafka } from 'kafkajs';

/**
 * Create the topics that do not exist yet (a broker may refuse to create topics on first use:
 * `auto.create.topics.enable=false`, as on the test harness and on most production clusters), with
 * `partitions` partitions each and the broker's default replication. Returns the topics it created.
 *
 * @example
 * await ensureTopics(kafka, ['legs', 'legs-labels'], 1); // ['legs', 'legs-labels'] the first time, [] after
 */
export async function ensureTopics(
  kafka: Kafka,
  topics: readonly string[],
  partitions: number,
): Promise<string[]> {
  const admin = kafka.admin();
  await admin.connect();
  try {
    const existing = new Set(await admin.listTopics());
    const missing = [...new Set(topics)].filter((t) => !existing.has(t));
    if (missing.length > 0) {
      await admin.createTopics({
        topics: missing.map((topic) => ({ topic, numPartitions: partitions })),
        waitForLeaders: true,
      });
    }
    return missing;
  } finally {
    await admin.disconnect();
  }
}
