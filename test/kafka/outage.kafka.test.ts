import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { stringify } from 'yaml';
import { scratch } from '../support/cli.js';
import { KafkaBroker } from '../support/kafka-broker.js';
import { kafkaSection, serveTopics } from '../support/kafka-config.js';
import { arrowMessage, seaEvents } from '../support/kafka-events.js';
import {
  createTopics,
  killServes,
  produce,
  readTopic,
  ScoreCounter,
  ServeProcess,
  scoreRows,
} from '../support/kafka-serve.js';
import { note } from '../support/note.js';

describe('a broker that goes away', () => {
  afterEach(killServes);

  it('is waited for: the service keeps running through a broker stop and start and scores every event', {
    timeout: 240_000,
  }, async () => {
    // A broker of its own: stopping the shared one would break the other test files.
    const broker = await KafkaBroker.start();
    try {
      const brokers = broker.bootstrap;
      const t = serveTopics();
      await createTopics(brokers, { [t.events]: 1, [t.scores]: 1, [t.dead]: 1, [t.journal]: 1 });
      const events = seaEvents(4000, 41);
      const batch = (from: number, to: number) => {
        const out = [];
        for (let i = from; i < to; i += 500) out.push({ value: arrowMessage(events, i, i + 500) });
        return out;
      };
      const config = join(await scratch(), 'shoal.yaml');
      await writeFile(
        config,
        stringify({
          seed: 5,
          ensemble: { kind: 'bagging', members: 2 },
          inputs: { id: 'id' },
          kafka: kafkaSection(brokers, t),
        }),
      );
      const serve = new ServeProcess(config);
      await produce(brokers, t.events, batch(0, 2000));
      const counter = await ScoreCounter.start(brokers, t.scores);
      await counter.reach(2000);
      await counter.stop();
      await broker.stop();
      await new Promise((d) => setTimeout(d, 5000));
      await broker.restart();
      note(`broker back after 5 s (restart took ${Math.round(broker.startMillis)} ms)`);
      await produce(brokers, t.events, batch(2000, 4000));
      const after = await ScoreCounter.start(brokers, t.scores);
      await after.reach(4000, 90_000);
      await after.stop();
      serve.signal('SIGTERM');
      expect(await serve.exited, serve.stderr).toBe(0);
      const scores = await readTopic(
        brokers,
        t.scores,
        (seen) => new Set(scoreRows(seen).map((r) => r.id)).size >= 4000,
      );
      expect(new Set(scoreRows(scores).map((r) => r.id)).size).toBe(4000);
    } finally {
      await broker.destroy();
    }
  });
});
