import type { JournalRecord } from './records.js';

/**
 * One journal record as an NDJSON line (with its line break). JSON has no NaN: a NaN estimate or
 * accuracy is written as null and read back as NaN by `parseJournal`.
 *
 * @example
 * out.write(journalLine({ type: 'input-drift', scored: 1200, trained: 1100, feature: 'temp', kind: 'numeric' }));
 */
export function journalLine(record: JournalRecord): string {
  return `${JSON.stringify(record)}\n`;
}
