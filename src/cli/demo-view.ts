import type { SeatView } from '../ensembles/index.js';
import { isDriftSignal, type JournalRecord, LIFECYCLE_CAUSES } from '../journal/index.js';
import type { SessionMetrics } from '../pipeline/index.js';
import { count, figure, type Terminal } from './terminal.js';

const REDRAW_MS = 200;
const BAR = 28;
const EVENTS = 8;
const SPARKS = '▁▂▃▄▅▆▇█';
/** Points of the accuracy history shown (one per window record, the newest last). */
const HISTORY = 60;
/** The causes counted as drift signals: the same set as the run's summary counts. */
const SIGNALS = LIFECYCLE_CAUSES.filter(isDriftSignal);

/** What the view shows about the run besides the session's metrics. */
export interface ViewState {
  /** Legs produced so far, and the run's length (null: until stopped). */
  readonly produced: number;
  readonly total: number | null;
  /** Scenario time now, ms since 1970. */
  readonly scenarioTime: number;
  /** Labels still out (inspections not done yet). */
  readonly labelsOut: number;
}

/**
 * The demo's terminal view. On an interactive terminal a block is redrawn in place (progress,
 * rows/s, windowed accuracy over time as a sparkline, the seats, the latest drift and replacement
 * events); otherwise plain lines: a progress line every `every` legs and one line per event as it
 * happens. Events come from the journal records the session writes, and from the scenario's script.
 */
export class DemoView {
  private readonly terminal: Terminal;
  private readonly every: number;
  private readonly started: number;
  private readonly title: string;
  private readonly window: number;
  private readonly events: string[] = [];
  private readonly history: number[] = [];
  private lastDraw = Number.NEGATIVE_INFINITY;
  private lastLine = 0;
  private drawnLines = 0;

  /** `window`: judged rows in the evaluation window; `every`: legs between plain progress lines. */
  constructor(terminal: Terminal, title: string, window: number, every: number) {
    this.terminal = terminal;
    this.title = title;
    this.window = window;
    this.every = every;
    this.started = terminal.now();
  }

  /** A journal record as the session writes it: windows feed the history, lifecycle changes the events. */
  record(r: JournalRecord): void {
    if (r.type === 'window') {
      if (r.window.accuracy !== null) this.history.push(r.window.accuracy);
      if (this.history.length > HISTORY) this.history.shift();
      return;
    }
    if (r.type === 'lifecycle') {
      const at = `leg ${count(r.scored)}`;
      if (r.cause === 'drift' || r.cause === 'outperformed') {
        this.event(
          `${at}  seat ${r.seat}: ${r.cause === 'drift' ? `drift signal (${r.detector}, error ${figure(r.estimate, 3)}), ` : ''}member ${r.member} retired: its understudy is measurably better`,
        );
      } else if (r.cause === 'drift-on-trial' || r.cause === 'drift-deferred') {
        this.event(
          `${at}  seat ${r.seat}: drift signal (${r.detector}, error ${figure(r.estimate, 3)}), ${r.cause === 'drift-deferred' ? 'replacement deferred by the cap' : 'understudy on trial'}`,
        );
      } else if (r.cause === 'trial-lapsed') {
        this.event(`${at}  seat ${r.seat}: understudy not measurably better; member ${r.member} stays`);
      } else if (r.cause === 'promoted' || r.cause === 'fresh') {
        this.event(
          `${at}  seat ${r.seat}: replaced by ${r.cause === 'promoted' ? 'its understudy' : 'a fresh member'} (member ${r.member})`,
        );
      } else if (r.cause === 'watched') {
        this.event(`${at}  seat ${r.seat}: watched (${r.detector} warning), an understudy starts`);
      }
      return;
    }
    if (r.type === 'input-drift') this.event(`leg ${count(r.scored)}  input drift on ${r.feature}`);
  }

  /** A scripted change of the scenario began. */
  scripted(leg: number, what: string): void {
    this.event(`leg ${count(leg)}  scenario: ${what}`);
  }

  /** Redraw (interactive, at most five times a second) or print a progress line every `every` legs. */
  update(state: ViewState, metrics: SessionMetrics, force = false): void {
    const now = this.terminal.now();
    if (this.terminal.interactive) {
      if (!force && now - this.lastDraw < REDRAW_MS) return;
      this.lastDraw = now;
      this.draw(state, metrics, now);
    } else if (force || state.produced - this.lastLine >= this.every) {
      this.lastLine = state.produced;
      this.terminal.err(`${this.progressLine(state, metrics, now)}\n`);
    }
  }

  private event(line: string): void {
    this.events.push(line);
    if (this.events.length > EVENTS) this.events.shift();
    if (!this.terminal.interactive) this.terminal.err(`event  ${line}\n`);
  }

  private progressLine(state: ViewState, metrics: SessionMetrics, now: number): string {
    const seconds = Math.max(1e-3, (now - this.started) / 1000);
    const of = state.total === null ? '' : ` / ${count(state.total)}`;
    const seats = tally(metrics.seats());
    return `legs ${count(state.produced)}${of}  ${count(state.produced / seconds)} rows/s  accuracy ${figure(metrics.windowAccuracy, 3)}  kappa ${figure(metrics.windowKappa, 3)}  seats ${seats}  replacements ${count(metrics.epoch)}  scenario ${scenarioClock(state.scenarioTime)}`;
  }

  private draw(state: ViewState, metrics: SessionMetrics, now: number): void {
    const seconds = Math.max(1e-3, (now - this.started) / 1000);
    let bar = '';
    if (state.total !== null) {
      const share = Math.min(1, state.produced / state.total);
      const full = Math.round(share * BAR);
      bar = `[${'#'.repeat(full)}${'.'.repeat(BAR - full)}] ${(share * 100).toFixed(0).padStart(3)}%  `;
    }
    const of = state.total === null ? '' : ` / ${count(state.total)}`;
    const labels = metrics.labels();
    // A line wider than the terminal would wrap, and the redraw would climb too few lines.
    const width =
      this.terminal.columns !== undefined && this.terminal.columns > 0 ? this.terminal.columns : 0;
    const lines = [
      this.title,
      '',
      `${bar}legs ${count(state.produced)}${of}   ${count(state.produced / seconds)} rows/s   scenario ${scenarioClock(state.scenarioTime)}`,
      `accuracy ${figure(metrics.windowAccuracy, 3)}  kappa ${figure(metrics.windowKappa, 3)}  (last ${count(this.window)} judged)   ${sparkline(this.history)}`,
      `inspections joined ${count(labels.joined)}   still out ${count(state.labelsOut)}   drift signals ${count(sum(metrics.lifecycleCounts(), SIGNALS))}   replacements ${count(metrics.epoch)}`,
      '',
      ...seatLines(metrics.seats(), width),
      '',
      'latest events:',
      ...this.events.map((e) => `  ${e}`),
      ...Array.from({ length: EVENTS - this.events.length }, () => ''),
    ];
    const up = this.drawnLines > 0 ? `\x1b[${this.drawnLines}F` : '';
    const clip = (l: string): string => (width > 0 && l.length >= width ? `${l.slice(0, width - 2)}…` : l);
    this.terminal.err(`${up}${lines.map((l) => `\x1b[2K${clip(l)}`).join('\n')}\n`);
    this.drawnLines = lines.length;
  }
}

/** Seats by state, e.g. `9 active, 1 watched`. */
function tally(seats: readonly SeatView[]): string {
  const by = new Map<string, number>();
  for (const s of seats) by.set(s.state, (by.get(s.state) ?? 0) + 1);
  return [...by].map(([state, n]) => `${n} ${state}`).join(', ');
}

/** Five seats a line: `#3 active   0.912 ·u` (·u: an understudy is training). */
/** The seats, as many to a line as fit in `width` characters (5 when the width is not known). */
function seatLines(seats: readonly SeatView[], width: number): string[] {
  const cells = seats.map(
    (s) =>
      `#${String(s.seat).padEnd(2)} ${s.state.padEnd(8)} ${figure(s.recentAccuracy, 3)}${s.understudy ? ' +u' : '   '}`,
  );
  const lines = ['seats (state, recent accuracy, +u = understudy training):'];
  const cell = cells[0]?.length ?? 1;
  const perLine = width > 0 ? Math.max(1, Math.min(5, Math.floor((width - 2 + 3) / (cell + 3)))) : 5;
  for (let i = 0; i < cells.length; i += perLine) lines.push(`  ${cells.slice(i, i + perLine).join('   ')}`);
  return lines;
}

function sparkline(values: readonly number[]): string {
  if (values.length === 0) return '';
  const low = Math.min(...values);
  const high = Math.max(...values);
  const span = high - low || 1;
  const marks = values.map((v) => SPARKS[Math.min(7, Math.floor(((v - low) / span) * 8))]).join('');
  return `${figure(low, 2)} ${marks} ${figure(high, 2)}`;
}

function sum(counts: Readonly<Record<string, number>>, keys: readonly string[]): number {
  return keys.reduce((a, k) => a + (counts[k] ?? 0), 0);
}

/** Scenario time as `Jun 14 09:05` (UTC). */
function scenarioClock(ms: number): string {
  const d = new Date(ms);
  const month = d.toLocaleString('en-US', { month: 'short', timeZone: 'UTC' });
  const hh = String(d.getUTCHours()).padStart(2, '0');
  const mm = String(d.getUTCMinutes()).padStart(2, '0');
  return `${month} ${String(d.getUTCDate()).padStart(2, ' ')} ${hh}:${mm}`;
}
