import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { tableToIPC } from 'apache-arrow';
import { afterEach, describe, expect, inject, it } from 'vitest';
import { stringify } from 'yaml';
import { scratch, shoal } from '../support/cli.js';
import { kafkaSection, serveTopics } from '../support/kafka-config.js';
import { arrowMessage, eventTable, seaEvents } from '../support/kafka-events.js';
import {
  client,
  countScoreRows,
  createTopics,
  killServes,
  produce,
  readTopic,
  ServeProcess,
  scoreRows,
} from '../support/kafka-serve.js';
import { note } from '../support/note.js';

const RUN = { seed: 11, ensemble: { kind: 'bagging', members: 5 }, inputs: { label: 'label', id: 'id' } };

describe('shoal serve on a real broker', () => {
  afterEach(killServes);

  it('scores 50,000 Arrow events with inline labels exactly as replay does, and exits 0 on SIGTERM having committed', async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    await createTopics(brokers, { [t.events]: 1, [t.scores]: 1, [t.dead]: 1, [t.journal]: 1 });
    const rows = 50_000;
    const per = 500;
    const events = seaEvents(rows, 5);
    const messages = [];
    for (let i = 0; i < rows; i += per) messages.push({ value: arrowMessage(events, i, i + per) });
    await produce(brokers, t.events, messages);

    const dir = await scratch();
    const journal = join(dir, 'journal.ndjson');
    const config = join(dir, 'shoal.yaml');
    await writeFile(
      config,
      stringify({
        ...RUN,
        kafka: kafkaSection(brokers, t, { journal: { topic: t.journal, file: journal } }),
      }),
    );
    const serve = new ServeProcess(config);
    const scores = await readTopic(brokers, t.scores, (seen) => countScoreRows(seen) >= rows);
    serve.signal('SIGTERM');
    expect(await serve.exited, serve.stderr).toBe(0);

    const ids = new Set(scoreRows(scores).map((r) => r.id as string));
    expect(ids.size).toBe(rows);
    expect(ids.has('e0') && ids.has(`e${rows - 1}`)).toBe(true);

    const admin = client(brokers).admin();
    await admin.connect();
    const [committed] = await admin.fetchOffsets({ groupId: t.group, topics: [t.events] });
    await admin.disconnect();
    expect(committed!.partitions[0]!.offset).toBe(String(messages.length));

    const file = join(dir, 'events.arrow');
    await writeFile(file, tableToIPC(eventTable(events, 0, rows, true), 'file'));
    await writeFile(join(dir, 'run.yaml'), stringify(RUN));
    const replay = await shoal('replay', file, '--config', join(dir, 'run.yaml'), '--json');
    expect(replay.code, replay.err).toBe(0);
    const offline = JSON.parse(replay.out) as Record<string, number>;
    const lines = (await readFile(journal, 'utf8'))
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l) as Record<string, unknown>);
    const summary = lines.find((l) => l.type === 'summary')!;
    note(`serve: ${rows} rows, accuracy ${String(summary.accuracy)}; replay ${offline.accuracy}`);
    for (const key of [
      'rows',
      'accuracy',
      'kappa',
      'kappaM',
      'kappaTemporal',
      'logLoss',
      'replacements',
      'driftSignals',
    ])
      expect(summary[key], key).toBe(offline[key]);
  });
});
