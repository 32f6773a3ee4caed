import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, describe, expect, inject, it } from 'vitest';
import { stringify } from 'yaml';
import type { RunCheckpoint } from '../../src/checkpoint/index.js';
import { Rng } from '../../src/core/index.js';
import { FileCheckpointStore } from '../../src/files/index.js';
import { KafkaCheckpointStore } from '../../src/kafka/index.js';
import type { SessionSnapshot } from '../../src/pipeline/index.js';
import { scratch } from '../support/cli.js';
import { createServeTopics, kafkaSection, type ServeTopics, serveTopics } from '../support/kafka-config.js';
import { arrowMessage, seaEvents, shuffledLabels } from '../support/kafka-events.js';
import { uniqueName } from '../support/kafka-names.js';
import {
  client,
  killServes,
  produce,
  quietLogger,
  ScoreCounter,
  ServeProcess,
  waitCommitted,
  waitGroupEmpty,
} from '../support/kafka-serve.js';
import { note } from '../support/note.js';

const RUN = { seed: 23, ensemble: { kind: 'bagging', members: 3 }, inputs: { label: 'label', id: 'id' } };
const ROWS = 50_000;
/** Events per round; each round's labels follow, shuffled, once the round was scored. */
const ROUND = 2_000;
const PER_MESSAGE = 500;
const LABELS_PER_MESSAGE = 100;
const KILLS = 5;

describe('serve checkpoints aligned with Kafka offsets (real broker)', () => {
  afterEach(killServes);

  it.each([
    { delivery: 'at-least-once', store: 'files' },
    { delivery: 'exactly-once', store: 'a compacted topic' },
  ] as const)(
    '$delivery, checkpoints in $store: killed with SIGKILL 5 times over 50,000 events with late labels, ends with the model of an uninterrupted run',
    async ({ delivery }) => {
      const brokers = inject('kafkaBrokers');
      const t = serveTopics();
      const labelsTopic = `${t.events}-labels`;
      await createServeTopics(brokers, t, 1, [labelsTopic]);
      const events = seaEvents(ROWS, 31);
      const dir = await scratch();
      const crashStore: Store =
        delivery === 'exactly-once' ? { topic: uniqueName('checkpoints') } : { dir: join(dir, 'crash') };
      const config = await serveConfig(
        dir,
        'crash.yaml',
        brokers,
        t,
        labelsTopic,
        crashStore,
        2_000,
        delivery,
      );

      // Five seeded kill points (in distinct ids scored), each in a different stretch of the run.
      const rng = new Rng(41);
      const kills = Array.from({ length: KILLS }, (_, k) =>
        Math.floor(((k + 0.2 + 0.6 * rng.next()) * ROWS) / (KILLS + 0.5)),
      );
      note(`kill points (ids scored): ${kills.join(', ')}`);
      const counter = await ScoreCounter.start(brokers, t.scores);
      let serve = new ServeProcess(config);
      let killed = 0;
      let labelMessages = 0;
      const killIfDue = async (): Promise<void> => {
        while (killed < KILLS && counter.ids.size >= kills[killed]!) {
          serve.signal('SIGKILL');
          await serve.exited;
          killed++;
          // The killed member stays in the group until its session times out; then the restart joins.
          await waitGroupEmpty(brokers, t.group);
          serve = new ServeProcess(config);
        }
      };
      try {
        for (let from = 0; from < ROWS; from += ROUND) {
          const messages = [];
          for (let i = from; i < from + ROUND; i += PER_MESSAGE) {
            messages.push({ value: arrowMessage(events, i, i + PER_MESSAGE, false) });
          }
          await produce(brokers, t.events, messages);
          while (counter.ids.size < from + ROUND) {
            await counter.reachIds(from + ROUND, () => killed < KILLS && counter.ids.size >= kills[killed]!);
            await killIfDue();
          }
          const labels = shuffledLabels(events, from, ROUND, rng, LABELS_PER_MESSAGE);
          await produce(brokers, labelsTopic, labels);
          labelMessages += labels.length;
        }
        expect(killed).toBe(KILLS);
        // Everything read is covered by a checkpoint once the group's commits reach the ends.
        await waitCommitted(brokers, t.group, {
          [t.events]: ROWS / PER_MESSAGE,
          [labelsTopic]: labelMessages,
        });
      } finally {
        await counter.stop();
      }
      serve.signal('SIGTERM');
      expect(await serve.exited, serve.stderr).toBe(0);
      const crashed = await newest(brokers, crashStore, t.group);

      // The same topics read again by a run that is never interrupted (its own group and store).
      const again = serveTopics();
      await createServeTopics(brokers, again);
      const uninterruptedStore = { dir: join(dir, 'uninterrupted') };
      const reference = await serveConfig(
        dir,
        'uninterrupted.yaml',
        brokers,
        { ...again, events: t.events },
        labelsTopic,
        uninterruptedStore,
        20_000,
        'at-least-once',
      );
      const whole = new ServeProcess(reference);
      await waitCommitted(brokers, again.group, {
        [t.events]: ROWS / PER_MESSAGE,
        [labelsTopic]: labelMessages,
      });
      whole.signal('SIGTERM');
      expect(await whole.exited, whole.stderr).toBe(0);
      const uninterrupted = await newest(brokers, uninterruptedStore, again.group);

      note(
        `${counter.rows} score rows for ${counter.ids.size} ids (${counter.rows - counter.ids.size} repeats after ${KILLS} kills)`,
      );
      // Every id is on the scores topic at least once; with exactly-once delivery a read_committed
      // consumer (kafkajs's default isolation) sees each exactly once: the broker hides records of
      // aborted transactions from it (Apache Kafka transactions, KIP-98; from memory).
      expect(counter.ids.size).toBe(ROWS);
      if (delivery === 'exactly-once') expect(counter.rows).toBe(ROWS);
      for (const s of [crashed.session, uninterrupted.session]) {
        expect(s.counts.scored).toBe(ROWS);
        expect(s.counts.trained).toBe(ROWS);
        expect(s.counts.joined).toBe(ROWS);
        expect(s.positions).toEqual({
          [`${t.events}/0`]: String(ROWS / PER_MESSAGE),
          [`${labelsTopic}/0`]: String(labelMessages),
        });
      }
      // The model: nothing lost and nothing trained twice across the kills.
      expect(crashed.session.ensemble).toEqual(uninterrupted.session.ensemble);
      expect(crashed.session.monitor).toEqual(uninterrupted.session.monitor);
      expect(crashed.decoder).toEqual(uninterrupted.decoder);
    },
    600_000,
  );
});

async function serveConfig(
  dir: string,
  name: string,
  brokers: string,
  t: ServeTopics,
  labelsTopic: string,
  store: Store,
  everyRows: number,
  delivery: 'at-least-once' | 'exactly-once',
): Promise<string> {
  const path = join(dir, name);
  await writeFile(
    path,
    stringify({
      ...RUN,
      kafka: kafkaSection(brokers, t, {
        labels: { topic: labelsTopic },
        log: { level: 'info' },
        delivery,
        checkpoint: { ...store, everyRows, everySeconds: 1 },
      }),
    }),
  );
  return path;
}

/** Where a run keeps its checkpoints: a directory, or a compacted topic. */
type Store = { readonly dir: string } | { readonly topic: string };

/** The newest checkpoint of a run's global session. */
async function newest(
  brokers: string,
  store: Store,
  group: string,
): Promise<{ session: SessionSnapshot; decoder: unknown }> {
  let stored: { checkpoint: RunCheckpoint } | null | undefined;
  if ('dir' in store) stored = await new FileCheckpointStore(store.dir).latest();
  else {
    const kafkaStore = new KafkaCheckpointStore(
      client(brokers),
      { topic: store.topic, pipeline: group },
      quietLogger(),
    );
    await kafkaStore.connect();
    stored = (await kafkaStore.latest(['global'])).get('global');
    await kafkaStore.disconnect();
  }
  if (stored === null || stored === undefined) throw new Error(`no checkpoint in ${JSON.stringify(store)}`);
  const { state } = stored.checkpoint as RunCheckpoint<unknown, SessionSnapshot>;
  return { session: state.session, decoder: state.decoder };
}
