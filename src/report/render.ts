import {
  type JournalRecord,
  type RunRecord,
  type SummaryRecord,
  TASKS,
  type Task,
} from '../journal/index.js';
import { changeTable } from './change-table.js';
import { configTable, schemaTable } from './config-table.js';
import { confusionTables } from './confusion.js';
import { escapeHtml } from './escape.js';
import { header } from './header.js';
import { metricChart } from './metric-chart.js';
import { seatLanes } from './seat-lanes.js';
import { STYLE } from './styles.js';
import { timeFrame } from './time-axis.js';
import { timeline } from './timeline.js';

export interface ReportOptions {
  /** The document's title; default: 'Shoal run report'. */
  readonly title?: string;
  /** The caution in the footer; default: `CAUTION`. A setting with its own rules names them here. */
  readonly caution?: string;
}

export const CAUTION =
  'Scores are advisory. A human stays in the loop for consequential decisions; local law and licensed practice come first.';

/**
 * The HTML report of a run, from its journal: one self-contained document (inline CSS and SVG, no
 * script, no font, no link to anything) with the headline figures, windowed accuracy and κ over rows
 * with drift signals and replacements marked, the stream's true change points and each one's detection delay (when the journal has them), a lane per seat with its members' states, the confusion
 * matrix with per-class scores, and the configuration and schema the run used. Every string read from
 * the journal is escaped.
 *
 * The report reads the first `run` record and the last `summary`; any part of the journal may be
 * missing (a run that stopped early has no summary) and the report says so where it would have shown it.
 * A regression's report draws its windowed RMSE and MAE and shows MAE, RMSE and R²: it has no classes
 * (no confusion matrix) and no member lifecycle (no seats).
 *
 * @example
 * const records = parseJournal(readFileSync('run.ndjson', 'utf8'), 'run.ndjson');
 * writeFileSync('report.html', renderReport(records, { title: 'SEA, bagging of 10 trees' }));
 */
export function renderReport(records: readonly JournalRecord[], options: ReportOptions = {}): string {
  const run = records.find((r): r is RunRecord => r.type === 'run');
  const summary = records.findLast((r): r is SummaryRecord => r.type === 'summary');
  const t = timeline(records);
  const frame = timeFrame(t.rows);
  const title = options.title ?? 'Shoal run report';
  const task = taskOf(run, summary);
  const judged =
    task === 'regression'
      ? [section('RMSE and MAE over the run', metricChart(t, frame, task))]
      : [
          section('Accuracy and κ over the run', metricChart(t, frame, task)),
          section(`Seats (${t.seats})`, seatLanes(t, frame)),
          section(
            'Confusion matrix',
            summary === undefined
              ? '<p class="note">No summary record: the run did not finish, so there is no confusion matrix.</p>'
              : confusionTables(summary),
          ),
        ];
  const changes =
    t.changes === null || run?.changes === undefined
      ? []
      : [section('True change points of the stream', changeTable(t.changes, run.changes))];
  const sections = [
    header(title, run, summary, t, task),
    ...judged.slice(0, 1),
    ...changes,
    ...judged.slice(1),
    section(
      'Configuration',
      run === undefined ? '<p class="note">No run record.</p>' : configTable(run.config),
    ),
    section('Schema', run === undefined ? '<p class="note">No run record.</p>' : schemaTable(run.schema)),
  ];
  return (
    '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">' +
    '<meta name="viewport" content="width=device-width, initial-scale=1">' +
    `<title>${escapeHtml(title)}</title><style>${STYLE}</style></head>` +
    `<body><main>${sections.join('\n')}\n<footer>${escapeHtml(options.caution ?? CAUTION)}</footer></main></body></html>\n`
  );
}

/** The run's task, from its summary or else its configuration (a journal without either: classification). */
function taskOf(run: RunRecord | undefined, summary: SummaryRecord | undefined): Task {
  const configured = run?.config.task;
  return summary?.task ?? (TASKS.includes(configured as Task) ? (configured as Task) : 'classification');
}

function section(heading: string, body: string): string {
  return `<section><h2>${escapeHtml(heading)}</h2>${body}</section>`;
}
