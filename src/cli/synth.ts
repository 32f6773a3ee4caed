import { ShoalError } from '../core/index.js';
import { createWriter } from '../files/index.js';
import type { FrameFormat } from '../frames/index.js';
import { buildStream, STREAM_NAMES, STREAMS, type StreamName, take } from '../streams/index.js';
import { decimal, parse, positionals, text, whole } from './args.js';
import { count, type Terminal } from './terminal.js';

const BLOCK = 10_000;

export const SYNTH_HELP = `shoal synth <generator> --rows N --out FILE [options]

Write a published benchmark stream to a file, with concept changes where asked.

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
The label column is named "label".`;

export async function synth(args: readonly string[], terminal: Terminal): Promise<number> {
  const parsed = parse('synth', args, {
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
    terminal.out(`${SYNTH_HELP}\n`);
    return 0;
  }
  const [generator] = positionals('synth', parsed, ['generator']);
  if (!(STREAM_NAMES as readonly string[]).includes(generator!)) {
    throw new ShoalError(
      'invalid-parameter',
      `synth: unknown generator ${JSON.stringify(generator)}; choose one of ${STREAM_NAMES.join(', ')}`,
    );
  }
  const rows = whole('synth', parsed, 'rows');
  const out = text(parsed, 'out');
  if (rows === undefined) throw new ShoalError('invalid-parameter', 'synth: --rows is required');
  if (out === undefined) throw new ShoalError('invalid-parameter', 'synth: --out is required');
  const every = whole('synth', parsed, 'every');
  const width = whole('synth', parsed, 'width', 0);
  const noise = decimal('synth', parsed, 'noise');
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
  const format = text(parsed, 'format') as FrameFormat | undefined;
  const writer = await createWriter(out, { schema: stream.schema, classes: stream.classes }, format);
  try {
    for (let done = 0; done < rows; done += BLOCK) {
      const block = take(stream, Math.min(BLOCK, rows - done));
      await writer.write({ rows: block.labels.length, values: block.rows, labels: block.labels });
    }
  } finally {
    await writer.close();
  }
  const spec = STREAMS[generator as StreamName];
  const changes =
    stream.changePoints.length > 0
      ? `, concepts ${stream.sequence.join(' → ')} every ${count(every ?? 0)} rows`
      : '';
  terminal.out(`wrote ${count(rows)} rows of ${spec.name}${changes} (seed ${seed}) to ${out}\n`);
  return 0;
}
