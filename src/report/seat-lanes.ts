import type { MemberState } from '../journal/index.js';
import { replacementText } from './event-text.js';
import { grouped, percent } from './format.js';
import { LANE_MARK_COLOUR } from './styles.js';
import { px, svgElement, svgText, svgTitle } from './svg.js';
import { byColumn, listing, type TimeFrame, timeAxis } from './time-axis.js';
import type { LaneSegment, Timeline } from './timeline.js';

const HEADER = 20;
const LANE = 16;
const PITCH = 22;
/**
 * Width in pixels of the columns a lane is drawn in: two pixels keep a 5,000,000-row journal with a
 * replacement every few thousand rows under a few thousand blocks, and a block wide enough to hover.
 */
export const LANE_UNIT = 2;
/** Replacement ticks of one lane are gathered per this many pixels. */
const MARK_UNIT = 4;

/**
 * Which state a column shows when several segments share it: the most alarming, so that a
 * short watch inside a long journal stays visible.
 */
const PRIORITY: Readonly<Record<MemberState, number>> = { active: 0, warming: 1, retired: 2, watched: 3 };

/** A run of columns of one lane showing one member in one state. */
export interface LaneBlock {
  /** First column (of `unit` pixels, counted from the plot's left edge) and one past the last. */
  readonly from: number;
  readonly to: number;
  readonly state: MemberState;
  readonly member: number;
  readonly learner: string;
  /** Rows from the start of the first segment drawn to the end of the last. */
  readonly start: number;
  readonly end: number;
  readonly reason: string;
}

/**
 * The blocks a lane draws: each segment covers the columns its rows fall in (at least one), a
 * column shared by several segments shows the most alarming state (latest on a tie), and runs of
 * columns showing the same member in the same state merge. A lane is therefore at most one block per
 * column whatever the number of lifecycle records.
 */
export function laneBlocks(
  segments: readonly LaneSegment[],
  frame: TimeFrame,
  unit = LANE_UNIT,
): LaneBlock[] {
  const columns = Math.ceil((frame.right - frame.left) / unit);
  const chosen = new Int32Array(columns).fill(-1);
  const column = (row: number): number => Math.floor((frame.x(row) - frame.left) / unit);
  segments.forEach((s, i) => {
    const first = Math.min(columns - 1, Math.max(0, column(s.start)));
    const last = Math.min(columns - 1, Math.max(first, Math.ceil((frame.x(s.end) - frame.left) / unit) - 1));
    for (let c = first; c <= last; c++) {
      const held = chosen[c]!;
      if (held < 0 || PRIORITY[s.state] >= PRIORITY[segments[held]!.state]) chosen[c] = i;
    }
  });
  const blocks: LaneBlock[] = [];
  let c = 0;
  while (c < columns) {
    const i = chosen[c]!;
    if (i < 0) {
      c++;
      continue;
    }
    const s = segments[i]!;
    let last = i;
    let to = c + 1;
    while (to < columns) {
      const j = chosen[to]!;
      if (j < 0 || segments[j]!.state !== s.state || segments[j]!.member !== s.member) break;
      last = j;
      to++;
    }
    blocks.push({
      from: c,
      to,
      state: s.state,
      member: s.member,
      learner: s.learner,
      start: s.start,
      end: segments[last]!.end,
      reason: s.reason,
    });
    c = to;
  }
  return blocks;
}

/** The learners that sat in a seat, in the order they first took it (`hoeffding-tree`, or `a / b`). */
export function seatLearners(segments: readonly LaneSegment[]): string {
  return [...new Set(segments.map((s) => s.learner))].join(' / ');
}

/**
 * One lane per seat, labelled with its number and the learner that sits in it: the member states over
 * rows as coloured blocks (hover: member id, learner, state, rows, reason), a dark tick where the seat's member was replaced, and the seat's recent accuracy from the
 * last window record at the right.
 */
export function seatLanes(t: Timeline, frame: TimeFrame): string {
  const last = t.windows[t.windows.length - 1];
  let svg =
    svgText(frame.left - 8, 12, 'seat, learner', 'tick', 'end') +
    svgText(frame.right + 8, 12, 'recent acc.', 'tick', 'start');
  const states = new Set<MemberState>();
  for (let seat = 0; seat < t.seats; seat++) {
    const top = HEADER + seat * PITCH;
    const learner = seatLearners(t.lanes[seat]!);
    let lane = svgText(frame.left - 8, top + LANE - 4, `${seat} ${learner}`.trim(), 'lane-label', 'end');
    for (const b of laneBlocks(t.lanes[seat]!, frame)) {
      states.add(b.state);
      lane += svgElement(
        'rect',
        {
          x: frame.left + b.from * LANE_UNIT,
          y: top,
          width: Math.min(frame.right, frame.left + b.to * LANE_UNIT) - frame.left - b.from * LANE_UNIT,
          height: LANE,
          class: `st-${b.state}`,
        },
        svgTitle(
          `member ${b.member} (${b.learner}) ${b.state}, rows ${grouped(b.start)}–${grouped(b.end)}: ${b.reason}`,
        ),
      );
    }
    const own = t.replacements.filter((r) => r.seat === seat);
    for (const g of byColumn(frame, own, MARK_UNIT)) {
      lane += svgElement(
        'g',
        { class: 'lane-mark', 'data-rows': g.items.map((r) => r.row).join(' ') },
        svgTitle(
          listing(
            `seat ${seat}, replaced:`,
            g.items.map((r) => replacementText(r, false)),
            2,
          ),
        ) + svgElement('rect', { x: g.x - 1, y: top - 3, width: 2, height: LANE + 6 }),
      );
    }
    const recent = last?.seats[seat];
    lane += svgText(
      frame.right + 8,
      top + LANE - 4,
      recent === undefined ? '—' : percent(recent, 1),
      'lane-label',
    );
    svg += svgElement('g', { class: 'lane', 'data-seat': seat }, lane);
  }
  const axisY = HEADER + Math.max(1, t.seats) * PITCH;
  svg += timeAxis(frame, axisY);
  const height = axisY + 24;
  const keys = (['warming', 'active', 'watched', 'retired'] as const)
    .filter((s) => s !== 'retired' || states.has(s))
    .map((s) => `<span><i class="swatch sw-${s}"></i>${s}</span>`)
    .join('');
  const legend =
    `<div class="legend">${keys}` +
    `<span><i class="swatch" style="width:3px;height:14px;background:${LANE_MARK_COLOUR}"></i>member retired, successor took the seat</span>` +
    `<span class="hint">hover a block for its member id, rows and reason</span></div>`;
  const empty =
    t.seats === 0
      ? '<p class="note">The journal holds no lifecycle records: there are no seats to draw.</p>'
      : '';
  return (
    legend +
    svgElement(
      'svg',
      {
        viewBox: `0 0 ${frame.width} ${px(height)}`,
        role: 'img',
        class: 'chart lanes',
        'aria-label': `Member states of ${t.seats} seats over rows`,
      },
      svg,
    ) +
    empty
  );
}
