import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { Message } from 'kafkajs';
import { afterEach, describe, expect, inject, it } from 'vitest';
import { stringify } from 'yaml';
import { scratch } from '../support/cli.js';
import { createServeTopics, kafkaSection, type ServeTopics, serveTopics } from '../support/kafka-config.js';
import { arrowMessage, type Events, seaEvents } from '../support/kafka-events.js';
import {
  countScoreRows,
  killServes,
  produce,
  readTopic,
  ServeProcess,
  scoreRows,
} from '../support/kafka-serve.js';

const RUN = { seed: 8, ensemble: { kind: 'bagging', members: 3 }, inputs: { label: 'label', id: 'id' } };

async function config(brokers: string, t: ServeTopics, scope: string): Promise<string> {
  const path = join(await scratch(), 'shoal.yaml');
  await writeFile(path, stringify({ ...RUN, kafka: kafkaSection(brokers, t, { scope }) }));
  return path;
}

/** Rows [from, to) in messages of 100 rows, spread over 4 partitions in turn. */
function spread(e: Events, from: number, to: number): Message[] {
  const out: Message[] = [];
  for (let i = from, n = 0; i < to; i += 100, n++)
    out.push({ value: arrowMessage(e, i, i + 100), partition: n % 4 });
  return out;
}

/** The partitions named in an instance's latest "joined the group" log record. */
function assigned(serve: ServeProcess): string[] {
  const joins = serve.logs().filter((l) => l.msg === 'joined the group');
  return ((joins[joins.length - 1]?.streams ?? []) as string[]).slice().sort();
}

async function until(check: () => boolean, what: string, timeoutMs = 60_000): Promise<void> {
  const began = performance.now();
  while (!check()) {
    if (performance.now() - began > timeoutMs) throw new Error(`timed out waiting for ${what}`);
    await new Promise((d) => setTimeout(d, 100));
  }
}

describe('scale-out by partition', () => {
  afterEach(killServes);

  it('splits a 4-partition topic between two instances, and the survivor of a SIGTERM scores everything', async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    await createServeTopics(brokers, t, 4);
    const events = seaEvents(8000, 13);
    const path = await config(brokers, t, 'partition');
    const a = new ServeProcess(path);
    await a.waitFor('serving');
    const b = new ServeProcess(path);
    await b.waitFor('serving');
    await until(() => assigned(a).length === 2 && assigned(b).length === 2, 'two partitions each');
    const all = [0, 1, 2, 3].map((p) => `${t.events}/${p}`);
    expect([...assigned(a), ...assigned(b)].sort()).toEqual(all);

    await produce(brokers, t.events, spread(events, 0, 4000));
    await readTopic(brokers, t.scores, (seen) => countScoreRows(seen) >= 4000);
    a.signal('SIGTERM');
    expect(await a.exited, a.stderr).toBe(0);
    await until(() => assigned(b).length === 4, 'the survivor to take every partition');
    expect(assigned(b)).toEqual(all);

    await produce(brokers, t.events, spread(events, 4000, 8000));
    const scores = await readTopic(
      brokers,
      t.scores,
      (seen) => new Set(scoreRows(seen).map((r) => r.id)).size >= 8000,
    );
    b.signal('SIGTERM');
    expect(await b.exited, b.stderr).toBe(0);
    expect(new Set(scoreRows(scores).map((r) => r.id)).size).toBe(8000);
  });

  it('refuses a second instance in the same group when the scope is global', async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    await createServeTopics(brokers, t, 2);
    const path = await config(brokers, t, 'global');
    const first = new ServeProcess(path);
    await first.waitFor('serving');
    await until(() => assigned(first).length === 2, 'the first instance to join');
    const second = new ServeProcess(path);
    expect(await second.exited).toBe(2);
    expect(second.stderr).toContain(`consumer group "${t.group}" already has a member, and scope is global`);
    first.signal('SIGTERM');
    expect(await first.exited, first.stderr).toBe(0);
  });
});
