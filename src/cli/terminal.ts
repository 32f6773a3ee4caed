/**
 * What the CLI writes: results to stdout, progress and errors to stderr. Injected so tests can run
 * commands in-process and read what they printed.
 */
export interface Terminal {
  out(text: string): void;
  err(text: string): void;
  /** True when stderr is an interactive terminal (then a progress bar is drawn). */
  readonly interactive: boolean;
  /** Width of the interactive terminal in characters, when known (a redrawn view must not wrap). */
  readonly columns?: number;
  /** Milliseconds from a fixed origin. */
  now(): number;
}

export const processTerminal: Terminal = {
  out: (text) => process.stdout.write(text),
  err: (text) => process.stderr.write(text),
  interactive: process.stderr.isTTY === true,
  get columns() {
    return process.stderr.columns;
  },
  now: () => performance.now(),
};

/** 12345.6 → "12,346". */
export function count(n: number): string {
  return Math.round(n).toLocaleString('en-US');
}

/** A figure to `digits` decimals, or "–" when it is not defined. */
export function figure(x: number | null | undefined, digits = 4): string {
  return x === null || x === undefined || !Number.isFinite(x) ? '–' : x.toFixed(digits);
}

/** Seconds as m:ss or h:mm:ss. */
export function clock(seconds: number): string {
  const s = Math.max(0, Math.round(seconds));
  const h = Math.floor(s / 3600);
  const m = Math.floor((s % 3600) / 60);
  const ss = String(s % 60).padStart(2, '0');
  return h > 0 ? `${h}:${String(m).padStart(2, '0')}:${ss}` : `${m}:${ss}`;
}

/** Left-aligned label column, right-aligned value column. */
export function table(rows: readonly (readonly [string, string])[]): string {
  const wide = Math.max(...rows.map((r) => r[0].length));
  const wideValue = Math.max(...rows.map((r) => r[1].length));
  return `${rows.map(([k, v]) => `  ${k.padEnd(wide)}  ${v.padStart(wideValue)}`).join('\n')}\n`;
}
