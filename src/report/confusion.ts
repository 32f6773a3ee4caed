import type { SummaryRecord } from '../journal/index.js';
import { escapeHtml } from './escape.js';
import { fixed, grouped, percent } from './format.js';

/** One class's line, read from a confusion matrix. */
export interface ClassScore {
  readonly name: string;
  /** Rows whose true class it is (row total rₖ). */
  readonly support: number;
  /** Rows predicted as it (column total qₖ). */
  readonly predicted: number;
  readonly precision: number | null;
  readonly recall: number | null;
  readonly f1: number | null;
}

/**
 * Per-class scores from confusion[actual][predicted] (c = diagonal cell, r = row total, q = column
 * total): precision c/q, recall c/r, F1 = 2c/(r + q), the harmonic mean of the two (van Rijsbergen,
 * Information Retrieval, 2nd ed., 1979, the F measure with β = 1, from memory); null where the
 * denominator is 0. A class without a name is called by its code.
 *
 * @example
 * classScores([[8, 2], [1, 9]], ['no', 'yes'])[1]; // { precision: 9/11, recall: 0.9, f1: 18/21, … }
 */
export function classScores(
  confusion: readonly (readonly number[])[],
  classes: readonly string[],
): ClassScore[] {
  return confusion.map((row, k) => {
    const c = row[k] ?? 0;
    const r = row.reduce((a, b) => a + b, 0);
    const q = confusion.reduce((a, other) => a + (other[k] ?? 0), 0);
    return {
      name: className(classes, k),
      support: r,
      predicted: q,
      precision: q > 0 ? c / q : null,
      recall: r > 0 ? c / r : null,
      f1: r + q > 0 ? (2 * c) / (r + q) : null,
    };
  });
}

function className(classes: readonly string[], code: number): string {
  return classes[code] ?? `class ${code}`;
}

/** Share of a row at which a cell's text turns white on its shade. */
const DARK = 0.55;
/** Above this many classes the matrix is set tighter, so that 26 classes fit a laptop's width. */
const COMPACT_FROM = 12;

/**
 * The confusion matrix (rows: actual class, columns: predicted class; each cell shaded in proportion
 * to its share of the row, the diagonal in bold) beside the per-class precision, recall and F1.
 */
export function confusionTables(summary: SummaryRecord): string {
  const { confusion, classes } = summary;
  if (confusion.length === 0) return '<p class="note">The summary holds no confusion matrix.</p>';
  const scores = classScores(confusion, classes);
  const names = scores.map((s) => escapeHtml(s.name));
  // Classes in the order of their names (numbers by value), not in the order the stream met them.
  const order = scores
    .map((_, k) => k)
    .sort((i, j) => scores[i]!.name.localeCompare(scores[j]!.name, 'en', { numeric: true }));
  const compact = order.length > COMPACT_FROM ? ' compact' : '';
  let matrix =
    `<table class="matrix${compact}"><thead><tr><th class="corner">actual ↓ predicted →</th>` +
    order.map((k) => `<th class="num">${names[k]}</th>`).join('') +
    '<th class="num">total</th></tr></thead><tbody>';
  for (const a of order) {
    const row = confusion[a]!;
    const total = scores[a]!.support;
    matrix += `<tr><th>${names[a]}</th>`;
    for (const p of order) {
      const count = row[p]!;
      const share = total > 0 ? count / total : 0;
      const ink = share > DARK ? ';color:#fff' : '';
      const hover = `actual ${scores[a]!.name}, predicted ${scores[p]!.name}: ${grouped(count)} (${percent(share, 1)} of the row)`;
      matrix +=
        `<td class="cell${a === p ? ' diag' : ''}" data-actual="${a}" data-predicted="${p}" ` +
        `style="background:rgba(0,114,178,${share.toFixed(3)})${ink}" title="${escapeHtml(hover)}">${grouped(count)}</td>`;
    }
    matrix += `<td class="num">${grouped(total)}</td></tr>`;
  }
  matrix += '</tbody></table>';

  let perClass =
    '<table class="per-class"><thead><tr><th>class</th><th class="num">actual</th><th class="num">predicted</th>' +
    '<th class="num">precision</th><th class="num">recall</th><th class="num">F1</th></tr></thead><tbody>';
  for (const k of order) {
    const s = scores[k]!;
    perClass +=
      `<tr><th>${names[k]}</th><td class="num">${grouped(s.support)}</td><td class="num">${grouped(s.predicted)}</td>` +
      `<td class="num">${fixed(s.precision, 3)}</td><td class="num">${fixed(s.recall, 3)}</td><td class="num">${fixed(s.f1, 3)}</td></tr>`;
  }
  perClass += '</tbody></table>';
  return `<div class="tables"><div class="scroll">${matrix}</div><div class="scroll">${perClass}</div></div>`;
}
