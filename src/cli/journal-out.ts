import { journalFile } from '../files/index.js';
import type { JournalRecord } from '../journal/index.js';

/**
 * The journal: to a file when a path is given, kept in memory when the report needs it, and shown to
 * `watch` (a live view) as each record is written.
 */
export class JournalOut {
  readonly kept: JournalRecord[] = [];
  private readonly file: ReturnType<typeof journalFile> | null;
  private readonly keep: boolean;
  private readonly watch: ((record: JournalRecord) => void) | null;

  constructor(
    path: string | undefined,
    keep: boolean,
    watch: ((record: JournalRecord) => void) | null = null,
  ) {
    this.file = path === undefined ? null : journalFile(path);
    this.keep = keep;
    this.watch = watch;
  }

  write(record: JournalRecord): void {
    if (this.keep) this.kept.push(record);
    this.file?.write(record);
    this.watch?.(record);
  }

  async flush(): Promise<void> {
    await this.file?.flush();
  }

  async close(): Promise<void> {
    await this.file?.close();
  }
}
