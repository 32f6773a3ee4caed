import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { stringify } from 'yaml';
import type { RunCheckpoint } from '../../src/checkpoint/index.js';
import { FileCheckpointStore } from '../../src/files/index.js';
import type { SessionSnapshot } from '../../src/pipeline/index.js';
import { scratch } from '../support/cli.js';
import { KafkaBroker } from '../support/kafka-broker.js';
import { createServeTopics, kafkaSection, serveTopics } from '../support/kafka-config.js';
import { arrowMessage, seaEvents } from '../support/kafka-events.js';
import { killServes, produce, ScoreCounter, ServeProcess, waitCommitted } from '../support/kafka-serve.js';
import { note } from '../support/note.js';
import { eventually, freePort } from '../support/prometheus.js';

const ROWS = 6_000;
const PER_MESSAGE = 250;

/**
 * A broker that goes away in the middle of a run. Every wait is on a condition (ids scored, `/readyz`,
 * the group's commits), bounded generously, never on a time: under a loaded machine the steps only take
 * longer.
 */
describe('a broker that goes away', () => {
  afterEach(killServes);

  it('is waited for: not ready meanwhile, the state kept, every event scored once it is back, none trained twice', {
    timeout: 400_000,
  }, async () => {
    // A broker of its own: stopping the shared one would break the other test files.
    const broker = await KafkaBroker.start();
    try {
      const brokers = broker.bootstrap;
      const t = serveTopics();
      await createServeTopics(brokers, t);
      const events = seaEvents(ROWS, 43);
      const messages = (from: number, to: number) => {
        const out = [];
        for (let i = from; i < to; i += PER_MESSAGE)
          out.push({ value: arrowMessage(events, i, i + PER_MESSAGE) });
        return out;
      };
      const dir = await scratch();
      const port = await freePort();
      const config = join(dir, 'shoal.yaml');
      await writeFile(
        config,
        stringify({
          seed: 5,
          ensemble: { kind: 'bagging', members: 2 },
          inputs: { id: 'id', label: 'label' },
          kafka: kafkaSection(brokers, t, {
            log: { level: 'info' },
            checkpoint: { dir: join(dir, 'checkpoints'), everyRows: 1_000, everySeconds: 1 },
          }),
          telemetry: { listen: `127.0.0.1:${port}` },
        }),
      );
      const ready = async (): Promise<number> => {
        try {
          return (await fetch(`http://127.0.0.1:${port}/readyz`)).status;
        } catch {
          return 0;
        }
      };
      const serve = new ServeProcess(config);
      let exited = false;
      void serve.exited.then(() => {
        exited = true;
      });

      let counter = await ScoreCounter.start(brokers, t.scores);
      await produce(brokers, t.events, messages(0, 2_000));
      await counter.reachIds(2_000);
      await eventually(async () => (await ready()) === 200, '/readyz 200 before the outage');
      // Events on the topic that the service is still reading when the broker goes.
      await produce(brokers, t.events, messages(2_000, 4_000));
      await counter.stop();
      await broker.stop();
      await eventually(
        async () => (await ready()) === 503,
        '/readyz 503 while the broker is away',
        180_000,
        200,
      );
      const during = await fetch(`http://127.0.0.1:${port}/readyz`).then((r) => r.text());
      expect(exited).toBe(false);
      await broker.restart();
      note(`broker back (restart took ${Math.round(broker.startMillis)} ms); /readyz said: ${during.trim()}`);
      await eventually(
        async () => (await ready()) === 200,
        '/readyz 200 after the broker came back',
        180_000,
        200,
      );

      await produce(brokers, t.events, messages(4_000, ROWS));
      counter = await ScoreCounter.start(brokers, t.scores);
      await counter.reachIds(ROWS, () => false, 180_000);
      await counter.stop();
      await waitCommitted(brokers, t.group, { [t.events]: ROWS / PER_MESSAGE });
      expect(exited).toBe(false);
      serve.signal('SIGTERM');
      expect(await serve.exited, serve.stderr).toBe(0);

      // The service kept its state through the outage: one session scored and trained on each event
      // exactly once (a restart from nothing, or a re-read of what it had, would show other counts).
      const stored = await new FileCheckpointStore(join(dir, 'checkpoints')).latest();
      const { session } = (stored!.checkpoint as RunCheckpoint<unknown, SessionSnapshot>).state;
      expect(session.counts.scored).toBe(ROWS);
      expect(session.counts.trained).toBe(ROWS);
      expect(session.positions).toEqual({ [`${t.events}/0`]: String(ROWS / PER_MESSAGE) });
      expect(counter.ids.size).toBe(ROWS);
      const retried = serve.logs().filter((l) => String(l.msg).startsWith('cannot ')).length;
      note(`${counter.rows} score rows for ${ROWS} ids; ${retried} warnings while the broker was away`);
    } finally {
      await broker.destroy();
    }
  });
});
