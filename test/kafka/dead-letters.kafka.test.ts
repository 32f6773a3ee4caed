import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { makeVector, Table, tableToIPC, Utf8, vectorFromArray } from 'apache-arrow';
import type { Message } from 'kafkajs';
import { afterEach, describe, expect, inject, it } from 'vitest';
import { stringify } from 'yaml';
import { scratch } from '../support/cli.js';
import { createServeTopics, kafkaSection, serveTopics } from '../support/kafka-config.js';
import { arrowMessage, seaEvents } from '../support/kafka-events.js';
import {
  countScoreRows,
  killServes,
  produce,
  readTopic,
  ServeProcess,
  scoreRows,
} from '../support/kafka-serve.js';

const ARROW = { 'content-type': 'application/vnd.apache.arrow.stream' };
const NDJSON = { 'content-type': 'application/x-ndjson' };

/** A one-row Arrow message: string (or null) columns as utf8, numbers as float64. */
function arrowRow(row: Record<string, string | number | null>): Message {
  const columns = Object.fromEntries(
    Object.entries(row).map(([name, v]) => [
      name,
      typeof v === 'number' ? makeVector(new Float64Array([v])) : vectorFromArray([v], new Utf8()),
    ]),
  );
  return { value: Buffer.from(tableToIPC(new Table(columns), 'stream')), headers: ARROW };
}

/** One bad message of each kind, with the reason code the service must give it. */
function badMessages(): { message: Message; code: string }[] {
  const out: { message: Message; code: string }[] = [];
  const add = (count: number, code: string, make: (i: number) => Message): void => {
    for (let i = 0; i < count; i++) out.push({ message: make(i), code });
  };
  add(7, 'undecodable', (i) => ({ value: Buffer.from(`not arrow ${i}`), headers: ARROW }));
  add(7, 'schema-mismatch', (i) => arrowRow({ id: `s${i}`, f1: 1, f3: 1, label: '0' }));
  add(7, 'missing-id', () => arrowRow({ id: null, f1: 1, f2: 2, f3: 3, label: '0' }));
  add(7, 'bad-label', (i) => ({
    value: JSON.stringify({ id: `b${i}`, f1: 1, f2: 2, f3: 3, label: { rejected: true } }),
    headers: NDJSON,
  }));
  add(3, 'bad-value', (i) => ({
    value: JSON.stringify({ id: `v${i}`, f1: 'warm', f2: 2, f3: 3, label: '1' }),
    headers: NDJSON,
  }));
  // An IEEE 754 infinity in a float64 column: a number, but not one a model can learn from.
  add(3, 'bad-value', (i) =>
    arrowRow({
      id: `inf${i}`,
      f1: 1,
      f2: i % 2 === 0 ? Number.POSITIVE_INFINITY : Number.NEGATIVE_INFINITY,
      f3: 3,
      label: '0',
    }),
  );
  add(6, 'oversize', () => ({ value: Buffer.alloc(70_000, 7), headers: ARROW }));
  add(5, 'empty', () => ({ value: Buffer.alloc(0) }));
  add(5, 'unsupported-content-type', (i) => ({
    value: `id,f1\nc${i},1\n`,
    headers: { 'content-type': 'text/csv' },
  }));
  return out;
}

describe('dead letters', () => {
  afterEach(killServes);

  it('routes 50 malformed messages of 8 kinds to the dead-letter topic with their reasons and scores the 950 good events', async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    await createServeTopics(brokers, t);
    const events = seaEvents(950, 21);
    const bad = badMessages();
    expect(bad.length).toBe(50);
    const good: Message[] = [];
    for (let i = 0; i < 950; i += 50) good.push({ value: arrowMessage(events, i, i + 50), headers: ARROW });
    // Interleave: a bad message after every good one until the good ones run out, then the rest.
    const messages: Message[] = [];
    for (let i = 0; i < Math.max(good.length, bad.length); i++) {
      if (i < good.length) messages.push(good[i]!);
      if (i < bad.length) messages.push(bad[i]!.message);
    }
    await produce(brokers, t.events, messages);

    const dir = await scratch();
    const config = join(dir, 'shoal.yaml');
    await writeFile(
      config,
      stringify({
        seed: 3,
        ensemble: { kind: 'bagging', members: 3 },
        inputs: { label: 'label', id: 'id' },
        kafka: kafkaSection(brokers, t, { events: { topics: [t.events], maxMessageBytes: 65_536 } }),
      }),
    );
    const serve = new ServeProcess(config);
    const [scores, dead] = await Promise.all([
      readTopic(brokers, t.scores, (seen) => countScoreRows(seen) >= 950),
      readTopic(brokers, t.dead, (seen) => seen.length >= 50),
    ]);
    serve.signal('SIGTERM');
    expect(await serve.exited, serve.stderr).toBe(0);

    expect(new Set(scoreRows(scores).map((r) => r.id)).size).toBe(950);
    expect(dead.length).toBe(50);
    const offsets = new Map(messages.map((m, i) => [m, i]));
    const expected = bad.map((b) => ({ offset: String(offsets.get(b.message)), code: b.code }));
    const got = dead.map((d) => ({
      offset: d.headers!['shoal-source-offset']!.toString(),
      code: d.headers!['shoal-reason']!.toString(),
    }));
    expect(got.sort((a, b) => Number(a.offset) - Number(b.offset))).toEqual(expected);
    for (const d of dead) {
      expect(d.headers!['shoal-source-topic']!.toString()).toBe(t.events);
      expect(d.headers!['shoal-source-partition']!.toString()).toBe('0');
      expect(d.headers!['shoal-message']!.toString()).toContain(`${t.events}/0@`);
    }
    const undecodable = dead.find((d) => d.headers!['shoal-reason']!.toString() === 'undecodable')!;
    expect(undecodable.value!.toString()).toMatch(/^not arrow \d$/);
    const infinite = dead.filter((d) =>
      /expected a finite number/.test(d.headers!['shoal-message']!.toString()),
    );
    expect(infinite.length).toBe(3);
    expect(infinite[0]!.headers!['shoal-message']!.toString()).toMatch(
      /column "f2": expected a finite number, got Infinity/,
    );
    // The service never restarted its consumer: it joined the group once.
    expect(serve.logs().filter((l) => l.msg === 'joined the group').length).toBe(1);
  });
});
