import type { Task, ViewFigures } from '../journal/index.js';
import { escapeHtml } from './escape.js';
import { changeText, driftSignalText, inputDriftText, replacementText } from './event-text.js';
import { grouped } from './format.js';
import { type LinearScale, linearScale, niceTicks } from './scale.js';
import { CHANGE_COLOUR, EVENT_COLOURS, SERIES_COLOURS } from './styles.js';
import { px, svgElement, svgText, svgTitle } from './svg.js';
import { type SeriesPoint, thinSeries } from './thin.js';
import { byColumn, type ColumnGroup, listing, type TimeFrame, timeAxis } from './time-axis.js';
import type { Timeline } from './timeline.js';

const TOP = 10;
const PLOT_HEIGHT = 230;
const RUG_GAP = 12;
const RUG_ROW = 20;
/** Where a mark's count label starts, right of the mark. */
const LABEL_OFFSET = 5;
/** Draw a guide through the plot at each replacement while there are at most this many marks. */
const MOST_GUIDES = 60;

/** One line of the chart: a windowed figure of the journal's window records. */
interface ChartLine {
  readonly name: keyof typeof SERIES_COLOURS;
  readonly label: string;
  readonly value: (f: ViewFigures) => number | null;
}

/** What the chart draws for a task: its lines (the headline last, on top) and their range. */
interface ChartPlan {
  readonly lines: readonly ChartLine[];
  /** The figures' natural bounds: accuracy and κ lie in [−1, 1]; errors in [0, ∞). */
  readonly bounds: readonly [number, number];
  /** Whether members have a lifecycle whose warnings, drift signals and replacements get marks. */
  readonly lifecycle: boolean;
  readonly description: string;
}

const CHART_PLANS: Readonly<Record<Task, ChartPlan>> = {
  classification: {
    lines: [
      { name: 'kappa', label: "Cohen's κ", value: (f) => f.kappa },
      { name: 'accuracy', label: 'accuracy', value: (f) => f.accuracy },
    ],
    bounds: [-1, 1],
    lifecycle: true,
    description: 'Windowed accuracy and kappa over rows, with drift signals, replacements and input drifts',
  },
  regression: {
    lines: [
      { name: 'mae', label: 'MAE', value: (f) => f.mae },
      { name: 'rmse', label: 'RMSE', value: (f) => f.rmse },
    ],
    bounds: [0, Number.POSITIVE_INFINITY],
    lifecycle: false,
    description: 'Windowed RMSE and MAE over rows, with input drifts',
  },
};

/**
 * The windowed figures of the run over rows (from `window` records, thinned to at most `MOST_POINTS`
 * points per series) — accuracy and Cohen's κ of a classification, RMSE and MAE of a regression — with
 * rows of marks under the plot on the same axis: member warnings, drift signals and seat replacements
 * (a classification's member lifecycle) and input drifts, and the stream's true change points (when the
 * journal has them) as solid lines. Each mark names its events on hover.
 */
export function metricChart(t: Timeline, frame: TimeFrame, task: Task = 'classification'): string {
  const plan = CHART_PLANS[task];
  const lines = plan.lines.map((line) =>
    thinSeries(t.windows.map((w) => ({ row: w.row, value: line.value(w.window) }))),
  );
  const bottom = TOP + PLOT_HEIGHT;
  const y = linearScale(zoomed(lines.flat(), plan.bounds), [bottom, TOP]);
  const replacementMarks = byColumn(frame, t.replacements);

  let svg = yAxis(y, frame);
  if (replacementMarks.length <= MOST_GUIDES) {
    for (const g of replacementMarks) {
      svg += svgElement('line', { x1: g.x, x2: g.x, y1: TOP, y2: bottom, class: 'guide' });
    }
  }
  // The stream's true change points: a solid line through the plot and the rugs, labelled at the top.
  const rugsEnd = bottom + RUG_GAP + (plan.lifecycle ? 4 : 1) * RUG_ROW;
  for (const c of t.changes ?? []) {
    const at = frame.x(c.row);
    svg += svgElement(
      'g',
      { class: 'true-change', 'data-row': c.row },
      svgTitle(changeText(c)) +
        svgElement('line', { x1: at, x2: at, y1: TOP, y2: rugsEnd, class: 'change' }) +
        svgText(at + 3, TOP + 9, `${c.from} → ${c.to}`, 'change-label'),
    );
  }
  // The headline figure is drawn last so that it stays on top where the lines meet.
  plan.lines.forEach((line, k) => {
    svg += series(lines[k]!, line.name, frame, y);
  });
  svg += svgElement('line', { x1: frame.left, x2: frame.right, y1: bottom, y2: bottom, class: 'axis' });

  let rug = bottom + RUG_GAP;
  if (plan.lifecycle) {
    svg += rugRow(frame, rug, 'warnings', 'warning', byColumn(frame, t.warnings), driftSignalText);
    rug += RUG_ROW;
    svg += rugRow(frame, rug, 'drift signals', 'drift', byColumn(frame, t.driftSignals), driftSignalText);
    rug += RUG_ROW;
    svg += rugRow(frame, rug, 'replacements', 'replacement', replacementMarks, (r) => replacementText(r));
    rug += RUG_ROW;
  }
  svg += rugRow(frame, rug, 'input drifts', 'input', byColumn(frame, t.inputDrifts), inputDriftText);
  const axisY = rug + RUG_ROW - 4;
  svg += timeAxis(frame, axisY);
  const height = axisY + 24;

  const windowRows = t.windows.reduce((most, w) => Math.max(most, w.window.rows), 0);
  const over = windowRows > 0 ? ` over the last ${grouped(windowRows)} rows` : '';
  const legend =
    `<div class="legend">` +
    [...plan.lines]
      .reverse()
      .map((line) => lineKey(SERIES_COLOURS[line.name], `${line.label}${over}`))
      .join('') +
    (plan.lifecycle
      ? `<span><svg width="10" height="10" viewBox="0 0 10 10" aria-hidden="true"><path d="M1 2H9L5 9Z" fill="${EVENT_COLOURS.replacement}"/></svg>replacement (dashed line through the plot)</span>`
      : '') +
    (t.changes === null || t.changes.length === 0
      ? ''
      : `<span><i class="line-swatch" style="background:${CHANGE_COLOUR};width:3px;height:12px"></i>true change of the stream (solid line)</span>`) +
    `</div>`;
  const empty =
    t.windows.length === 0
      ? '<p class="note">The journal holds no window records: there are no figures over time to draw.</p>'
      : '';
  return (
    legend +
    svgElement(
      'svg',
      {
        viewBox: `0 0 ${frame.width} ${px(height)}`,
        role: 'img',
        class: 'chart metrics',
        'aria-label': plan.description,
      },
      svg,
    ) +
    empty
  );
}

/**
 * The y axis zooms to the data: from the lowest to the highest figure drawn, widened by a tenth of the
 * span on each side and rounded out to steps of 0.05, within the figures' bounds ([−1, 1] for accuracy
 * and κ, [0, ∞) for errors). A run whose accuracy moves between 0.86 and 0.90 is drawn over 0.85–0.95,
 * not 0–1.
 */
function zoomed(points: readonly SeriesPoint[], bounds: readonly [number, number]): [number, number] {
  let low = Number.POSITIVE_INFINITY;
  let high = Number.NEGATIVE_INFINITY;
  for (const p of points) {
    if (p.value === null) continue;
    if (p.value < low) low = p.value;
    if (p.value > high) high = p.value;
  }
  if (!(high >= low)) return [0, 1];
  const pad = Math.max(0.01, (high - low) / 10);
  const lo = Math.max(bounds[0], Math.floor((low - pad) * 20) / 20);
  const hi = Math.min(bounds[1], Math.ceil((high + pad) * 20) / 20);
  return [lo, hi];
}

function yAxis(y: LinearScale, frame: TimeFrame): string {
  let out = '';
  const ticks = niceTicks(y.domain[0], y.domain[1], 6);
  const step = ticks.length > 1 ? ticks[1]! - ticks[0]! : 0.1;
  const decimals = step < 0.1 - 1e-9 ? 2 : 1;
  for (const tick of ticks) {
    const at = y(tick);
    out += svgElement('line', {
      x1: frame.left,
      x2: frame.right,
      y1: at,
      y2: at,
      class: tick === 0 ? 'zero' : 'grid',
    });
    out += svgText(frame.left - 8, at + 4, tick.toFixed(decimals), 'tick', 'end');
  }
  return out;
}

/** One path per series; a gap (an undefined figure) starts a new sub-path. */
function series(points: readonly SeriesPoint[], name: string, frame: TimeFrame, y: LinearScale): string {
  let d = '';
  let pen = false;
  for (const p of points) {
    if (p.value === null) {
      pen = false;
      continue;
    }
    d += `${pen ? 'L' : 'M'}${px(frame.x(p.row))} ${px(y(p.value))}`;
    pen = true;
  }
  return d === '' ? '' : svgElement('path', { d, class: `series s-${name}`, 'data-series': name });
}

const GLYPHS: Readonly<Record<string, (x: number, y: number) => string>> = {
  drift: (x, y) => `M${px(x - 1)} ${px(y - 6)}h2v12h-2Z`,
  warning: (x, y) => `M${px(x - 4)} ${px(y - 4)}h8v8h-8Z`,
  replacement: (x, y) => `M${px(x - 4.5)} ${px(y - 5)}h9l-4.5 9Z`,
  input: (x, y) => `M${px(x)} ${px(y - 5)}l4.5 5l-4.5 5l-4.5 -5Z`,
};

/** Width of a count label of `digits` characters at the rug's 9 px type, with a little air (common practice). */
function labelWidth(text: string): number {
  return 5.6 * text.length + 3;
}

/**
 * Columns of marks whose count labels would overlap, gathered left to right: a cluster takes the next
 * column while that column's mark sits under the cluster's label. Each cluster carries one count, the
 * sum of its columns', so counts never print over each other and none is lost.
 */
function clusters<T extends { readonly row: number }>(groups: readonly ColumnGroup<T>[]): Cluster[] {
  const out: Cluster[] = [];
  for (const g of groups) {
    const open = out.at(-1);
    const n = g.items.length;
    const rows = g.items.map((i) => i.row);
    if (open !== undefined && g.x <= open.first + LABEL_OFFSET + labelWidth(grouped(open.count + n))) {
      open.last = g.x;
      open.count += n;
      open.lastRow = Math.max(open.lastRow, ...rows);
    } else
      out.push({ first: g.x, last: g.x, count: n, firstRow: Math.min(...rows), lastRow: Math.max(...rows) });
  }
  return out;
}

interface Cluster {
  first: number;
  last: number;
  count: number;
  firstRow: number;
  lastRow: number;
}

function rugRow<T extends { readonly row: number }>(
  frame: TimeFrame,
  y: number,
  label: string,
  kind: 'warning' | 'drift' | 'replacement' | 'input',
  groups: readonly ColumnGroup<T>[],
  describe: (item: T) => string,
): string {
  const mid = y + RUG_ROW / 2;
  let out = svgElement('line', { x1: frame.left, x2: frame.right, y1: mid, y2: mid, class: 'rug' });
  out += svgText(frame.left - 8, mid + 4, label, 'tick', 'end');
  const count = groups.reduce((n, g) => n + g.items.length, 0);
  out += svgText(frame.right + 8, mid + 4, grouped(count), 'tick', 'start');
  for (const g of groups) {
    const n = g.items.length;
    const head = n === 1 ? label.replace(/s$/, '') : `${grouped(n)} ${label}`;
    out += svgElement(
      'g',
      { class: `mark ${kind}`, 'data-rows': g.items.map((i) => i.row).join(' ') },
      svgTitle(listing(head, g.items.map(describe))) +
        svgElement('path', { d: GLYPHS[kind]!(g.x, mid), class: `m-${kind}` }),
    );
  }
  // Marks that share a column are one glyph, and neighbouring columns share one count: it says how
  // many events lie under it, so none is hidden; a bracket under the marks shows the columns it spans.
  for (const c of clusters(groups)) {
    if (c.count === 1) continue;
    const span = ` between rows ${grouped(c.firstRow)} and ${grouped(c.lastRow)}`;
    out += svgElement(
      'g',
      { class: 'mark-cluster', 'data-count': c.count },
      svgTitle(`${grouped(c.count)} ${label}${span}`) +
        (c.last > c.first
          ? svgElement('path', {
              d: `M${px(c.first)} ${px(mid + 7)}V${px(mid + 8.5)}H${px(c.last)}V${px(mid + 7)}`,
              class: 'cluster',
            })
          : '') +
        svgText(c.first + LABEL_OFFSET, mid - 3, grouped(c.count), 'mark-count'),
    );
  }
  return out;
}

function lineKey(colour: string, label: string): string {
  return `<span><i class="line-swatch" style="background:${colour}"></i>${escapeHtml(label)}</span>`;
}
