import { readdir, readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { tableToIPC } from 'apache-arrow';
import { afterEach, describe, expect, inject, it } from 'vitest';
import { stringify } from 'yaml';
import { canonicalJson, decodeCheckpoint, type RunCheckpoint } from '../../src/checkpoint/index.js';
import type { FrameDecoderSnapshot } from '../../src/frames/index.js';
import type { SessionSnapshot } from '../../src/pipeline/index.js';
import { scratch, shoal } from '../support/cli.js';
import { createServeTopics, kafkaSection, serveTopics } from '../support/kafka-config.js';
import { arrowMessage, eventTable, seaEvents } from '../support/kafka-events.js';
import { countScoreRows, killServes, produce, readTopic, ServeProcess } from '../support/kafka-serve.js';

/**
 * `shoal serve --threads 2` on a real broker: 20,000 Arrow events of SEA (Street & Kim, KDD 2001;
 * PUBLISHED.md) with inline labels, the members of a 6-member bagging (the default lifecycle: ADWIN
 * monitors, understudies, the proof gate) on two worker threads. Its checkpoint on SIGTERM and its
 * journal's lifecycle and window records must be those of `replay` of the same events in one thread.
 */
const RUN = { seed: 13, ensemble: { kind: 'bagging', members: 6 }, inputs: { label: 'label', id: 'id' } };

describe('shoal serve with members on worker threads', () => {
  afterEach(killServes);

  it('serves 20,000 events over two threads into the model and journal one thread builds', async () => {
    const brokers = inject('kafkaBrokers');
    const t = serveTopics();
    await createServeTopics(brokers, t);
    const rows = 20_000;
    const per = 500;
    const events = seaEvents(rows, 6);
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
        kafka: kafkaSection(brokers, t, {
          journal: { topic: t.journal, file: journal },
          checkpoint: { dir: join(dir, 'serve-checkpoints') },
        }),
      }),
    );
    const serve = new ServeProcess(config, {}, ['--threads', '2']);
    await readTopic(brokers, t.scores, (seen) => countScoreRows(seen) >= rows);
    serve.signal('SIGTERM');
    expect(await serve.exited, serve.stderr).toBe(0);

    const file = join(dir, 'events.arrow');
    await writeFile(file, tableToIPC(eventTable(events, 0, rows, true), 'file'));
    await writeFile(join(dir, 'run.yaml'), stringify(RUN));
    const replayJournal = join(dir, 'replay.ndjson');
    const replay = await shoal(
      'replay',
      file,
      ...['--config', join(dir, 'run.yaml'), '--json', '--checkpoint', join(dir, 'replay-checkpoints')],
      ...['--journal', replayJournal],
    );
    expect(replay.code, replay.err).toBe(0);
    const checkpoint = await newest(join(dir, 'serve-checkpoints'));
    expect(checkpoint.state.session.config.threads).toBe(2);
    expect(model(checkpoint)).toBe(model(await newest(join(dir, 'replay-checkpoints'))));
    const served = await records(journal);
    expect(served.filter((r) => r.type === 'lifecycle').length).toBeGreaterThan(12);
    expect(served).toEqual(await records(replayJournal));
  });
});

/** The lifecycle and window records of a journal file. */
async function records(path: string): Promise<Record<string, unknown>[]> {
  return (await readFile(path, 'utf8'))
    .trim()
    .split('\n')
    .map((l) => JSON.parse(l) as Record<string, unknown>)
    .filter((r) => r.type === 'lifecycle' || r.type === 'window');
}

/** The newest checkpoint file in `dir`, decoded (its header, length and SHA-256 checked). */
async function newest(dir: string): Promise<RunCheckpoint<FrameDecoderSnapshot, SessionSnapshot>> {
  const names = (await readdir(dir)).filter((n) => n.endsWith('.shoal')).sort();
  expect(names.length).toBeGreaterThan(0);
  const where = join(dir, names[names.length - 1]!);
  return decodeCheckpoint(await readFile(where), where) as RunCheckpoint<
    FrameDecoderSnapshot,
    SessionSnapshot
  >;
}

/**
 * A checkpoint's model as canonical JSON text: the session's snapshot without its stream positions and
 * thread count, and the decoder's state without the options it was given.
 */
function model(c: RunCheckpoint<FrameDecoderSnapshot, SessionSnapshot>): string {
  const { positions: _p, ...session } = c.state.session;
  const { options: _o, ...decoder } = c.state.decoder.state;
  return canonicalJson({ session: { ...session, config: { ...session.config, threads: 0 } }, decoder });
}
