import type { RunRecord, SummaryRecord, Task, ViewFigures } from '../journal/index.js';
import { escapeHtml } from './escape.js';
import { fixed, grouped, percent } from './format.js';
import type { Timeline } from './timeline.js';

interface Figure {
  readonly label: string;
  readonly value: string;
  /** What the figure means, on hover. */
  readonly help: string;
  /** Worth a second look (a κ below 0: worse than its reference). */
  readonly alert?: boolean;
}

const below0 = (v: number | null): boolean => v !== null && v < 0;

/**
 * The top of the report: title, where and when the run happened, and the headline figures as a strip.
 * The figures come from the `summary` record; a journal without one (a run that stopped early) shows
 * the cumulative view of its last window record and counts events from the journal itself.
 */
export function header(
  title: string,
  run: RunRecord | undefined,
  summary: SummaryRecord | undefined,
  t: Timeline,
  task: Task = 'classification',
): string {
  const last: ViewFigures | undefined = t.windows[t.windows.length - 1]?.cumulative;
  const figures = summary ?? {
    accuracy: last?.accuracy ?? null,
    kappa: last?.kappa ?? null,
    kappaM: last?.kappaM ?? null,
    kappaNoChange: last?.kappaNoChange ?? null,
    logLoss: last?.logLoss ?? null,
    macroF1: null,
    mae: last?.mae ?? null,
    rmse: last?.rmse ?? null,
    r2: last?.r2 ?? null,
    rowsPerSecond: null,
    driftSignals: t.driftSignals.length,
    replacements: t.replacements.length,
    inputDrifts: t.inputDrifts.length,
  };
  const strip = task === 'regression' ? regressionStrip(figures) : classificationStrip(figures);
  const facts: string[] = [];
  if (run !== undefined) {
    facts.push(`source <b>${escapeHtml(run.source)}</b>`);
    facts.push(`started ${escapeHtml(run.startedAt)}`);
    facts.push(`Shoal ${escapeHtml(run.shoal)}`);
    facts.push(`seed ${escapeHtml(run.seed)}`);
  } else {
    facts.push('no run record: source and configuration unknown');
  }
  facts.push(`<b>${grouped(summary?.rows ?? t.rows)}</b> rows`);
  if (summary !== undefined) facts.push(`${fixed(summary.seconds, 1)} s`);
  else facts.push('no summary record: the run did not finish, figures are from its last window');
  const cards = strip
    .map(
      (f) =>
        `<div class="figure${f.alert === true ? ' alert' : ''}" title="${escapeHtml(f.help)}">` +
        `<span class="label">${escapeHtml(f.label)}</span><span class="value">${escapeHtml(f.value)}</span></div>`,
    )
    .join('');
  return (
    `<header><h1>${escapeHtml(title)}</h1><p class="meta">${facts.join(' · ')}</p></header>` +
    `<div class="figures">${cards}</div>`
  );
}

/** The figures both strips read: a summary record, or what a journal without one can tell. */
type StripFigures = Pick<
  SummaryRecord,
  | 'accuracy'
  | 'kappa'
  | 'kappaM'
  | 'kappaNoChange'
  | 'logLoss'
  | 'macroF1'
  | 'mae'
  | 'rmse'
  | 'r2'
  | 'driftSignals'
  | 'replacements'
  | 'inputDrifts'
> & { readonly rowsPerSecond: number | null };

function classificationStrip(figures: StripFigures): Figure[] {
  return [
    {
      label: 'accuracy',
      value: percent(figures.accuracy),
      help: 'share of rows predicted right, over the whole run',
    },
    {
      label: "Cohen's κ",
      value: fixed(figures.kappa, 3),
      help: 'accuracy beyond chance agreement (Cohen 1960): 0 = chance, 1 = perfect',
      alert: below0(figures.kappa),
    },
    {
      label: 'κ-M',
      value: fixed(figures.kappaM, 3),
      help: 'κ against always predicting the majority class: below 0 = worse than that',
      alert: below0(figures.kappaM),
    },
    {
      label: 'κ vs no-change',
      value: fixed(figures.kappaNoChange, 3),
      help: 'κ against repeating the previous label: below 0 = worse than that',
      alert: below0(figures.kappaNoChange),
    },
    { label: 'log-loss', value: fixed(figures.logLoss, 3), help: 'mean −ln p(true class); lower is better' },
    { label: 'macro F1', value: fixed(figures.macroF1, 3), help: 'F1 averaged over the classes' },
    {
      label: 'rows/s',
      value: figures.rowsPerSecond === null ? '—' : grouped(figures.rowsPerSecond),
      help: 'rows scored and trained per second of the run',
    },
    {
      label: 'drift signals',
      value: grouped(figures.driftSignals),
      help: 'member monitors that signalled drift (acted on, deferred, or towards fewer errors)',
    },
    { label: 'replacements', value: grouped(figures.replacements), help: 'members retired and replaced' },
    {
      label: 'input drifts',
      value: grouped(figures.inputDrifts),
      help: 'input features whose distribution moved',
    },
  ];
}

/** A regression's strip: its errors and R², speed and input drifts (no member lifecycle). */
function regressionStrip(figures: StripFigures): Figure[] {
  return [
    { label: 'MAE', value: fixed(figures.mae, 3), help: 'mean absolute error of the numbers served' },
    { label: 'RMSE', value: fixed(figures.rmse, 3), help: 'root mean squared error of the numbers served' },
    {
      label: 'R²',
      value: fixed(figures.r2, 3),
      help: '1 − squared error / spread of the targets: 1 = perfect, 0 = no better than their mean',
      alert: below0(figures.r2),
    },
    {
      label: 'rows/s',
      value: figures.rowsPerSecond === null ? '—' : grouped(figures.rowsPerSecond),
      help: 'rows scored and trained per second of the run',
    },
    {
      label: 'input drifts',
      value: grouped(figures.inputDrifts),
      help: 'input features whose distribution moved',
    },
  ];
}
