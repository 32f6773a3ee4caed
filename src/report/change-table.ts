import type { ChangePoints } from '../core/index.js';
import { escapeHtml } from './escape.js';
import { delayText } from './event-text.js';
import { grouped } from './format.js';
import type { TrueChange } from './timeline.js';

/**
 * The stream's true change points (recorded by `shoal spawn` in the file, journaled by the replay) with
 * each one's detection delay: rows from the change to the first member drift signal and to the first
 * replacement before the next change.
 *
 * @example
 * changeTable(timeline(records).changes!, run.changes!);
 */
export function changeTable(changes: readonly TrueChange[], recorded: ChangePoints): string {
  const blend =
    recorded.width > 0 ? `, each blended over ${grouped(recorded.width)} rows (sigmoid)` : ', abrupt';
  if (changes.length === 0) {
    return (
      `<p class="note">The stream records one concept (${escapeHtml(recorded.concepts[0] ?? '')}) and no change: ` +
      'every drift signal and replacement in this run is a false alarm.</p>'
    );
  }
  const rows = changes.map(
    (c) =>
      `<tr><td>${escapeHtml(c.from)} → ${escapeHtml(c.to)}</td><td class="num">${grouped(c.row)}</td>` +
      `<td class="num">${delayText(c, c.firstSignal)}</td><td class="num">${delayText(c, c.firstReplacement)}</td></tr>`,
  );
  return (
    `<p class="note">${grouped(changes.length)} change${changes.length === 1 ? '' : 's'}${blend}. ` +
    'Delays count rows trained from the change.</p>' +
    '<div class="scroll"><table class="changes"><thead><tr><th>concept</th><th class="num">row</th>' +
    '<th class="num">first drift signal</th><th class="num">first replacement</th></tr></thead>' +
    `<tbody>${rows.join('')}</tbody></table></div>`
  );
}
