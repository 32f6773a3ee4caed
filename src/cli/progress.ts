import { clock, count, figure, type Terminal } from './terminal.js';

const WIDTH = 24;
const EVERY_MS = 100;

/**
 * A one-line progress bar on an interactive terminal: a bar and percentage and ETA when the total is
 * known, rows, rows per second, and the windowed accuracy. Redrawn at most ten times a second; silent
 * when the terminal is not interactive.
 */
export class Progress {
  private readonly terminal: Terminal;
  private readonly total: number | null;
  private readonly started: number;
  private last = Number.NEGATIVE_INFINITY;
  private drawn = false;

  constructor(terminal: Terminal, total: number | null) {
    this.terminal = terminal;
    this.total = total;
    this.started = terminal.now();
  }

  update(rows: number, accuracy: number | null): void {
    if (!this.terminal.interactive) return;
    const now = this.terminal.now();
    if (now - this.last < EVERY_MS) return;
    this.last = now;
    const seconds = (now - this.started) / 1000;
    const rate = seconds > 0 ? rows / seconds : 0;
    let bar = '';
    if (this.total !== null && this.total > 0) {
      const share = Math.min(1, rows / this.total);
      const full = Math.round(share * WIDTH);
      const eta = rate > 0 ? clock((this.total - rows) / rate) : '–';
      bar = `[${'#'.repeat(full)}${'.'.repeat(WIDTH - full)}] ${(share * 100).toFixed(0).padStart(3)}%  ETA ${eta}  `;
    }
    this.terminal.err(`\r${bar}${count(rows)} rows  ${count(rate)} rows/s  accuracy ${figure(accuracy)}   `);
    this.drawn = true;
  }

  /** Clear the line before the summary is printed. */
  done(): void {
    if (this.drawn) this.terminal.err('\r\x1b[2K');
  }
}
