import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { Message } from 'kafkajs';
import { afterEach, describe, expect, inject, it } from 'vitest';
import { stringify } from 'yaml';
import { samePartitionAssigner } from '../../src/kafka/index.js';
import { scratch } from '../support/cli.js';
import { createServeTopics, kafkaSection, serveTopics } from '../support/kafka-config.js';
import { arrowMessage, seaEvents } from '../support/kafka-events.js';
import { client, killServes, produce, ServeProcess } from '../support/kafka-serve.js';
import { eventually, freePort, promtoolCheckMetrics } from '../support/prometheus.js';

/**
 * `shoal serve` with its telemetry endpoint, against the real test broker: readiness follows the
 * consumer's group membership, and a scrape taken while the service runs is valid Prometheus text
 * (checked by Prometheus's own `promtool check metrics`) with the events scored, the dead letters by
 * reason and the consumer lag of every partition.
 */

async function get(url: string): Promise<{ status: number; body: string }> {
  const res = await fetch(url);
  return { status: res.status, body: await res.text() };
}

/** The value of the sample `name{labels}` in a Prometheus text exposition; null when absent. */
function sample(body: string, name: string, labels: Record<string, string | number>): number | null {
  for (const line of body.split('\n')) {
    if (!line.startsWith(`${name}{`)) continue;
    const m = /^[^{]+\{([^}]*)\} (\S+)$/.exec(line);
    if (m === null) continue;
    const have = new Map([...m[1]!.matchAll(/(\w+)="([^"]*)"/g)].map((p) => [p[1]!, p[2]!]));
    if (Object.entries(labels).every(([k, v]) => have.get(k) === String(v))) return Number(m[2]);
  }
  return null;
}

describe('serve telemetry', () => {
  afterEach(killServes);

  it('is not ready until the consumer joins, then scrapes pass promtool with events scored and lag per partition', async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    await createServeTopics(brokers, t, 2);

    // A member of the same group that stays inside its batch handler (no heartbeat, no rejoin) and
    // commits nothing: the group cannot finish a rebalance while it holds out, so the service cannot
    // join until it is let go. It holds on the one malformed message. It offers serve's assigner: a group
    // takes only members that share a protocol.
    await produce(brokers, t.events, [{ value: Buffer.from('not an Arrow stream'), partition: 1 }]);
    const blocker = client(brokers).consumer({
      groupId: t.group,
      maxWaitTimeInMs: 200,
      sessionTimeout: 30_000,
      partitionAssigners: [samePartitionAssigner],
    });
    let release = () => {};
    const released = new Promise<void>((done) => {
      release = done;
    });
    let holding = false;
    await blocker.connect();
    await blocker.subscribe({ topic: t.events, fromBeginning: true });
    void blocker.run({
      autoCommit: false,
      eachBatchAutoResolve: false,
      eachBatch: async () => {
        holding = true;
        await released;
      },
    });
    await eventually(async () => holding, 'the blocking member to hold its batch', 60_000, 100);

    const events = seaEvents(1_000, 41);
    const messages: Message[] = [];
    for (let i = 0; i < 1_000; i += 100) {
      messages.push({ value: arrowMessage(events, i, i + 100), partition: (i / 100) % 2 });
    }
    await produce(brokers, t.events, messages);

    const port = await freePort();
    const config = join(await scratch(), 'shoal.yaml');
    await writeFile(
      config,
      stringify({
        seed: 1,
        ensemble: { kind: 'bagging', members: 2 },
        inputs: { id: 'id' },
        kafka: kafkaSection(brokers, t, { scope: 'partition' }),
        telemetry: { listen: `127.0.0.1:${port}` },
      }),
    );
    const serve = new ServeProcess(config);
    const url = `http://127.0.0.1:${port}`;
    try {
      await serve.waitFor('telemetry listening');
      expect((await get(`${url}/healthz`)).status).toBe(200);
      const before = await get(`${url}/readyz`);
      expect(before.status).toBe(503);
      expect(before.body).toContain('consumer');
      expect(before.body).not.toContain('model');

      release();
      await eventually(async () => (await get(`${url}/readyz`)).status === 200, '/readyz to answer 200');
      await blocker.disconnect();

      let body = '';
      await eventually(async () => {
        body = (await get(`${url}/metrics`)).body;
        return (
          sample(body, 'shoal_events_total', { outcome: 'scored' }) === 1_000 &&
          sample(body, 'shoal_consumer_lag', { topic: t.events, partition: 0 }) === 0 &&
          sample(body, 'shoal_consumer_lag', { topic: t.events, partition: 1 }) === 0
        );
      }, '1,000 events scored and no lag left in the scrape');
      // Lag is the high watermark minus the next offset to read: both partitions were read to the end.
      expect(sample(body, 'shoal_consumer_lag', { topic: t.events, partition: 0 })).toBe(0);
      expect(sample(body, 'shoal_consumer_lag', { topic: t.events, partition: 1 })).toBe(0);
      expect(sample(body, 'shoal_dead_letters_total', { reason: 'undecodable' })).toBe(1);
      expect(sample(body, 'shoal_events_total', { outcome: 'trained' })).toBe(1_000);
      // Prometheus exposition format 0.0.4, checked by Prometheus's own linter (promtool).
      const checked = await promtoolCheckMetrics(body);
      expect(checked.out).toBe('');
      expect(checked.code).toBe(0);

      serve.signal('SIGTERM');
      expect(await serve.exited, serve.stderr).toBe(0);
    } finally {
      release();
      await blocker.disconnect().catch(() => undefined);
    }
  });
});
