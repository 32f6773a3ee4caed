import { readFile } from 'node:fs/promises';
import { ShoalError } from '../core/index.js';
import { parseJournal } from '../journal/index.js';
import { renderReport } from '../report/index.js';
import { parse, positionals, text } from './args.js';
import { openOutputs } from './outputs.js';
import type { Terminal } from './terminal.js';

export const REPORT_HELP = `shoal report JOURNAL --out report.html

Turn a run's journal (written by shoal replay --journal) into one self-contained HTML file:
accuracy and kappa over time with drift signals and replacements marked, a lane per seat with its
members' states, the confusion matrix and the configuration. No network is needed to open it.

Options:
  --out FILE        the HTML file to write (required; never the journal itself)
  --title TEXT      the page's title (default "Run journal JOURNAL")`;

export async function report(args: readonly string[], terminal: Terminal): Promise<number> {
  const parsed = parse('report', args, { out: { type: 'string' }, title: { type: 'string' } });
  if (parsed.values.help) {
    terminal.out(`${REPORT_HELP}\n`);
    return 0;
  }
  const [journal] = positionals('report', parsed, ['JOURNAL']);
  const out = text(parsed, 'out');
  if (out === undefined) throw new ShoalError('invalid-parameter', '--out is required');
  const [file] = await openOutputs([{ flag: 'JOURNAL', path: journal! }], [{ flag: '--out', path: out }]);
  try {
    let content: string;
    try {
      content = await readFile(journal!, 'utf8');
    } catch (e) {
      throw new ShoalError(
        'not-found',
        `${journal}: cannot read the journal (${(e as NodeJS.ErrnoException).code ?? 'error'})`,
        { cause: e },
      );
    }
    const records = parseJournal(content, journal!);
    file!.write(renderReport(records, { title: text(parsed, 'title') ?? `Run journal ${journal}` }));
    await file!.commit();
    terminal.out(`wrote ${out} from ${records.length} journal records\n`);
    return 0;
  } catch (e) {
    await file!.discard();
    throw e;
  }
}
