import { ShoalError } from '../core/index.js';
import { createWriter, formatOf } from '../files/index.js';
import type { FrameFormat } from '../frames/index.js';
import { buildStream, STREAM_NAMES, STREAMS, type StreamName, take } from '../streams/index.js';
import { decimal, parse, positionals, text, whole } from './args.js';
import { OutputFile } from './outputs.js';
import { count, type Terminal } from './terminal.js';

const BLOCK = 10_000;

export const SPAWN_HELP = `shoal spawn <generator> --rows N --out FILE [options]

Write a published benchmark stream to a file, with concept changes where asked (a shoal spawns a
stream). The former name, shoal synth, still works in this release and prints a notice.

Generators: ${STREAM_NAMES.join(', ')}

Options:
  --rows N          rows to write (required)
  --out FILE        file to write (required); the format follows the extension unless --format is given
  --seed S          seed of every random choice (default 1)
  --concepts LIST   concepts in order, comma-separated, recurring allowed (e.g. SEA: 8,9,7,9.5; STAGGER: a,b,c;
                    Agrawal: 1-10; sine: sine1,sine2,sine1-reversed; LED: 0-7 swapped segments)
  --every N         rows per concept (needed with more than one concept)
  --width W         rows over which each change blends in (sigmoid); 0 = abrupt (default)
  --noise P         the generator's noise (for most: the share of labels flipped)
  --format F        arrow (default for .arrow), csv or ndjson
The label column is named "label". An Arrow file records the stream's true change points in its schema
metadata (shoal.changes), so that replay journals them and the report shows each one's detection delay.`;

export async function spawn(args: readonly string[], terminal: Terminal): Promise<number> {
  const parsed = parse('spawn', args, {
    rows: { type: 'string' },
    out: { type: 'string' },
    seed: { type: 'string' },
    concepts: { type: 'string' },
    every: { type: 'string' },
    width: { type: 'string' },
    noise: { type: 'string' },
    format: { type: 'string' },
  });
  if (parsed.values.help) {
    terminal.out(`${SPAWN_HELP}\n`);
    return 0;
  }
  const [generator] = positionals('spawn', parsed, ['generator']);
  if (!(STREAM_NAMES as readonly string[]).includes(generator!)) {
    throw new ShoalError(
      'invalid-parameter',
      `unknown generator ${JSON.stringify(generator)}; choose one of ${STREAM_NAMES.join(', ')}`,
    );
  }
  const rows = whole(parsed, 'rows');
  const out = text(parsed, 'out');
  if (rows === undefined) throw new ShoalError('invalid-parameter', '--rows is required');
  if (out === undefined) throw new ShoalError('invalid-parameter', '--out is required');
  const every = whole(parsed, 'every');
  const width = whole(parsed, 'width', 0);
  const noise = decimal(parsed, 'noise');
  const concepts = text(parsed, 'concepts');
  const seed = text(parsed, 'seed') ?? '1';
  const stream = buildStream({
    generator: generator!,
    seed,
    ...(concepts === undefined ? {} : { concepts }),
    ...(every === undefined ? {} : { every }),
    ...(width === undefined ? {} : { width }),
    ...(noise === undefined ? {} : { noise }),
  });
  const format = formatOf(out, text(parsed, 'format') as FrameFormat | undefined);
  const file = await OutputFile.open({ flag: '--out', path: out });
  try {
    // The true change points go into an Arrow file's schema metadata, so that a replay's journal and
    // report can show each change and how long the ensemble took to react to it.
    const changes = { rows: stream.changePoints, concepts: stream.sequence, width: stream.width };
    const options = { schema: stream.schema, classes: stream.classes, changes };
    const writer = await createWriter(file.partialPath, options, format);
    try {
      for (let done = 0; done < rows; done += BLOCK) {
        const block = take(stream, Math.min(BLOCK, rows - done));
        await writer.write({ rows: block.labels.length, values: block.rows, labels: block.labels });
      }
    } finally {
      await writer.close();
    }
    await file.commit();
  } catch (e) {
    await file.discard();
    throw e;
  }
  const spec = STREAMS[generator as StreamName];
  const changes =
    stream.changePoints.length > 0
      ? `, concepts ${stream.sequence.join(' → ')} every ${count(every ?? 0)} rows`
      : '';
  terminal.out(`wrote ${count(rows)} rows of ${spec.name}${changes} (seed ${seed}) to ${out}\n`);
  return 0;
}
