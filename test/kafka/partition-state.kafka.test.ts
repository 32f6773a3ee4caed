import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, describe, expect, inject, it } from 'vitest';
import { stringify } from 'yaml';
import type { RunCheckpoint } from '../../src/checkpoint/index.js';
import { Rng } from '../../src/core/index.js';
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
} from '../support/kafka-serve.js';
import { note } from '../support/note.js';

const RUN = { seed: 29, ensemble: { kind: 'bagging', members: 3 }, inputs: { label: 'label', id: 'id' } };
const PARTITIONS = 4;
const ROWS = 16_000;
const PER_MESSAGE = 250;

/**
 * State follows partitions: with `scope: partition` and the Kafka checkpoint store, two instances split
 * the partitions; one is killed; the survivor is assigned its partitions and takes their sessions up from
 * the store before it fetches them. Each partition's final model must be the one a single uninterrupted
 * instance builds from that partition (a partition's session sees only its own events, in their order).
 */
describe('state that follows partitions (real broker)', () => {
  afterEach(killServes);

  it('a survivor takes up a killed instance’s partition sessions from the Kafka store and ends with the uninterrupted models (the pair on two threads each)', {
    timeout: 400_000,
  }, async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    const store = uniqueName('checkpoints');
    await createServeTopics(brokers, t, PARTITIONS);
    const events = seaEvents(ROWS, 53);
    const messages = (from: number, to: number) => {
      const out = [];
      for (let i = from; i < to; i += PER_MESSAGE) {
        out.push({
          value: arrowMessage(events, i, i + PER_MESSAGE),
          partition: (i / PER_MESSAGE) % PARTITIONS,
        });
      }
      return out;
    };
    const perPartition = Array.from({ length: PARTITIONS }, () => ROWS / PER_MESSAGE / PARTITIONS);
    const dir = await scratch();
    // The pair's members on worker threads: a session dropped in a rebalance gives its threads back to
    // the instance's pool, and a session taken up from the store may run on them; the models must still
    // be those of one thread, uninterrupted.
    const config = await serveConfig(join(dir, 'pair.yaml'), brokers, t, store, null, 2);

    const counter = await ScoreCounter.start(brokers, t.scores);
    const first = new ServeProcess(config);
    const second = new ServeProcess(config);
    await produce(brokers, t.events, messages(0, ROWS / 2));
    await counter.reachIds(ROWS / 2, () => false, 180_000);
    await waitTwoMembers(brokers, t.group);
    first.signal('SIGKILL');
    await first.exited;
    await produce(brokers, t.events, messages(ROWS / 2, ROWS));
    await counter.reachIds(ROWS, () => false, 180_000);
    await waitCommitted(brokers, t.group, { [t.events]: perPartition }, 180_000);
    await counter.stop();
    second.signal('SIGTERM');
    expect(await second.exited, second.stderr).toBe(0);
    const takenUp = second.logs().filter((l) => l.msg === 'going on from the checkpoint');
    note(
      `survivor took up ${takenUp.length} partition sessions from the store: ${takenUp.map((l) => String(l.scope)).join(', ')}; ${counter.rows} score rows for ${ROWS} ids`,
    );
    expect(takenUp.length).toBeGreaterThan(0);
    expect(counter.ids.size).toBe(ROWS);

    // One uninterrupted instance over the same events: its own group (the store's pipeline) and outputs.
    const again = serveTopics();
    await createServeTopics(brokers, again);
    const alone = new ServeProcess(
      await serveConfig(join(dir, 'alone.yaml'), brokers, { ...again, events: t.events }, store),
    );
    await waitCommitted(brokers, again.group, { [t.events]: perPartition }, 180_000);
    alone.signal('SIGTERM');
    expect(await alone.exited, alone.stderr).toBe(0);

    const pair = await finalSessions(brokers, store, t.group, t.events);
    const single = await finalSessions(brokers, store, again.group, t.events);
    for (let p = 0; p < PARTITIONS; p++) {
      const rows = ROWS / PARTITIONS;
      for (const s of [pair[p]!, single[p]!]) {
        expect(s.counts.scored, `partition ${p}`).toBe(rows);
        expect(s.counts.trained, `partition ${p}`).toBe(rows);
        expect(s.positions).toEqual({ [`${t.events}/${p}`]: String(perPartition[p]) });
      }
      expect(pair[p]!.config.threads, `partition ${p}`).toBe(2);
      expect(pair[p]!.ensemble, `partition ${p}`).toEqual(single[p]!.ensemble);
      expect(pair[p]!.evaluator, `partition ${p}`).toEqual(single[p]!.evaluator);
    }
  });

  it('with late labels: the survivor takes up the sessions with their pending predictions and labels offsets, and ends with the uninterrupted models', {
    timeout: 600_000,
  }, async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    const labelsTopic = `${t.events}-labels`;
    const store = uniqueName('checkpoints');
    await createServeTopics(brokers, t, PARTITIONS, { [labelsTopic]: PARTITIONS });
    const events = seaEvents(ROWS, 59);
    const partitionOf = (k: number): number => Math.floor(k / PER_MESSAGE) % PARTITIONS;
    const round = 2_000;
    const perPartition = Array.from({ length: PARTITIONS }, () => ROWS / PER_MESSAGE / PARTITIONS);
    const labelMessages = Array.from({ length: PARTITIONS }, () => 0);
    const dir = await scratch();
    const config = await serveConfig(join(dir, 'pair.yaml'), brokers, t, store, labelsTopic);

    const counter = await ScoreCounter.start(brokers, t.scores);
    const first = new ServeProcess(config);
    const second = new ServeProcess(config);
    await waitTwoMembers(brokers, t.group);
    const rng = new Rng(61);
    for (let from = 0; from < ROWS; from += round) {
      const messages = [];
      for (let i = from; i < from + round; i += PER_MESSAGE) {
        messages.push({ value: arrowMessage(events, i, i + PER_MESSAGE, false), partition: partitionOf(i) });
      }
      await produce(brokers, t.events, messages);
      await counter.reachIds(from + round, () => false, 180_000);
      // Killed with this round's predictions waiting for their labels (and the last ones of the round
      // before, read after its last checkpoint, maybe not yet covered by one).
      if (from + round === ROWS / 2) {
        first.signal('SIGKILL');
        await first.exited;
      }
      // Each label after its event, at most a round late, on its event's partition number.
      const labels = shuffledLabels(events, from, round, rng, 100, partitionOf);
      for (const m of labels) labelMessages[m.partition!]!++;
      await produce(brokers, labelsTopic, labels);
    }
    await waitCommitted(
      brokers,
      t.group,
      { [t.events]: perPartition, [labelsTopic]: labelMessages },
      180_000,
    );
    await counter.stop();
    second.signal('SIGTERM');
    expect(await second.exited, second.stderr).toBe(0);
    const takenUp = second.logs().filter((l) => l.msg === 'going on from the checkpoint');
    note(
      `late labels: survivor took up ${takenUp.length} partition sessions: ${takenUp.map((l) => String(l.scope)).join(', ')}; ${counter.rows} score rows for ${ROWS} ids`,
    );
    expect(takenUp.length).toBeGreaterThan(0);
    expect(counter.ids.size).toBe(ROWS);

    // One uninterrupted instance over the same events and labels: its own group (the store's pipeline).
    const again = serveTopics();
    await createServeTopics(brokers, again);
    const alone = new ServeProcess(
      await serveConfig(join(dir, 'alone.yaml'), brokers, { ...again, events: t.events }, store, labelsTopic),
    );
    await waitCommitted(
      brokers,
      again.group,
      { [t.events]: perPartition, [labelsTopic]: labelMessages },
      180_000,
    );
    alone.signal('SIGTERM');
    expect(await alone.exited, alone.stderr).toBe(0);

    const pair = await finalSessions(brokers, store, t.group, t.events);
    const single = await finalSessions(brokers, store, again.group, t.events);
    for (let p = 0; p < PARTITIONS; p++) {
      const rows = ROWS / PARTITIONS;
      for (const s of [pair[p]!, single[p]!]) {
        expect(s.counts.scored, `partition ${p}`).toBe(rows);
        expect(s.counts.trained, `partition ${p}`).toBe(rows);
        expect(s.counts.joined, `partition ${p}`).toBe(rows);
        expect(s.positions).toEqual({
          [`${t.events}/${p}`]: String(perPartition[p]),
          [`${labelsTopic}/${p}`]: String(labelMessages[p]),
        });
      }
      // A session trains in its labels' order, whenever its events were scored: nothing lost, nothing
      // trained twice across the kill. (The evaluations differ: the predictions served were not made
      // at the same moments.)
      expect(pair[p]!.ensemble, `partition ${p}`).toEqual(single[p]!.ensemble);
      expect(pair[p]!.monitor, `partition ${p}`).toEqual(single[p]!.monitor);
    }
  });
});

async function serveConfig(
  path: string,
  brokers: string,
  t: ServeTopics,
  store: string,
  labelsTopic: string | null = null,
  threads = 1,
): Promise<string> {
  await writeFile(
    path,
    stringify({
      ...RUN,
      ensemble: { ...RUN.ensemble, threads },
      kafka: kafkaSection(brokers, t, {
        scope: 'partition',
        log: { level: 'info' },
        checkpoint: { topic: store, everyRows: 1_000, everySeconds: 1 },
        ...(labelsTopic === null ? {} : { labels: { topic: labelsTopic } }),
      }),
    }),
  );
  return path;
}

/** Wait until the group has two members that hold partitions. */
async function waitTwoMembers(brokers: string, group: string): Promise<void> {
  const admin = client(brokers).admin();
  await admin.connect();
  try {
    for (let i = 0; ; i++) {
      const { groups } = await admin.describeGroups([group]);
      if (groups[0]?.state === 'Stable' && groups[0].members.length === 2) return;
      if (i > 1_000) throw new Error(`${group} never had two members`);
      await new Promise((d) => setTimeout(d, 100));
    }
  } finally {
    await admin.disconnect();
  }
}

/** Each partition's final session from the Kafka store (pipeline = the group). */
async function finalSessions(
  brokers: string,
  topic: string,
  group: string,
  events: string,
): Promise<SessionSnapshot[]> {
  const store = new KafkaCheckpointStore(client(brokers), { topic, pipeline: group }, quietLogger());
  await store.connect();
  try {
    const scopes = Array.from({ length: PARTITIONS }, (_, p) => `${events}/${p}`);
    const found = await store.latest(scopes);
    return scopes.map((s) => {
      const stored = found.get(s);
      if (stored === undefined) throw new Error(`no checkpoint of ${s} for ${group}`);
      return (stored.checkpoint as RunCheckpoint<unknown, SessionSnapshot>).state.session;
    });
  } finally {
    await store.disconnect();
  }
}
