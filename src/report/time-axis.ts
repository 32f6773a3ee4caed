import { compactRows, grouped } from './format.js';
import { type LinearScale, linearScale, niceTicks } from './scale.js';
import { svgElement, svgText } from './svg.js';

/**
 * The horizontal frame both charts share, so that a row sits at the same x in the metrics chart and in
 * the seat lanes drawn under it: width, margins and the rows → x map.
 */
export interface TimeFrame {
  readonly width: number;
  /** Left edge of the plot (labels sit to its left). */
  readonly left: number;
  /** Right edge of the plot (a column of figures sits to its right). */
  readonly right: number;
  /** Rows covered by the run: the axis runs from 0 to here. */
  readonly rows: number;
  readonly x: LinearScale;
}

export const FRAME_WIDTH = 1100;
/** Wide enough for a seat lane's label: its number and its learner (`12 hoeffding-tree`). */
const LEFT = 132;
const RIGHT_MARGIN = 80;

export function timeFrame(rows: number): TimeFrame {
  const right = FRAME_WIDTH - RIGHT_MARGIN;
  return {
    width: FRAME_WIDTH,
    left: LEFT,
    right,
    rows,
    x: linearScale([0, Math.max(1, rows)], [LEFT, right]),
  };
}

/** The rows axis at height `y`: a base line, ticks at round row counts and their labels below. */
export function timeAxis(frame: TimeFrame, y: number): string {
  const { x, left, right } = frame;
  let out = svgElement('line', { x1: left, x2: right, y1: y, y2: y, class: 'axis' });
  for (const tick of niceTicks(0, Math.max(1, frame.rows), 8)) {
    const at = x(tick);
    out += svgElement('line', { x1: at, x2: at, y1: y, y2: y + 4, class: 'axis' });
    out += svgText(at, y + 16, compactRows(tick), 'tick', 'middle');
  }
  out += svgText(left - 8, y + 16, 'rows', 'tick axis-name', 'end');
  return out;
}

/** Events that land in the same pixel column, drawn as one mark. */
export interface ColumnGroup<T> {
  readonly x: number;
  readonly items: readonly T[];
}

/**
 * Gather events by the column of `unit` pixels their row falls in (in row order), so that thousands of
 * events in a long journal make at most one mark per column. A mark sits at its first event's row.
 */
export function byColumn<T extends { readonly row: number }>(
  frame: TimeFrame,
  items: readonly T[],
  unit = 1,
): ColumnGroup<T>[] {
  const groups: { x: number; items: T[] }[] = [];
  let column = Number.NaN;
  for (const item of [...items].sort((a, b) => a.row - b.row)) {
    const at = frame.x(item.row);
    const c = Math.floor(at / unit);
    if (c === column) groups[groups.length - 1]!.items.push(item);
    else groups.push({ x: at, items: [item] });
    column = c;
  }
  return groups;
}

/** A hover text listing the events of a mark: up to `most` lines, then a count of the rest. */
export function listing(head: string, lines: readonly string[], most = 4): string {
  const shown = lines.slice(0, most);
  const rest = lines.length - shown.length;
  return [head, ...shown, ...(rest > 0 ? [`… and ${grouped(rest)} more`] : [])].join('\n');
}
