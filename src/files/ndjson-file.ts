import { once } from 'node:events';
import { createWriteStream, type WriteStream } from 'node:fs';
import { ShoalError } from '../core/index.js';
import { type JournalRecord, journalLine } from '../journal/index.js';
import type { DeadLetter, DeadLetterSink, JournalSink } from '../pipeline/index.js';

/**
 * Lines appended to a file, with back-pressure: `write` queues a line, `flush` resolves once the file
 * has taken what was queued (call it once per batch), `close` ends the file. A failure to write is
 * raised by the next `flush` or `close` as a `ShoalError` naming the path.
 */
export class LineFile {
  readonly path: string;
  private readonly stream: WriteStream;
  private failure: Error | null = null;

  constructor(path: string) {
    this.path = path;
    this.stream = createWriteStream(path);
    this.stream.on('error', (e) => {
      this.failure ??= e;
    });
  }

  write(line: string): void {
    this.stream.write(line);
  }

  async flush(): Promise<void> {
    this.check();
    if (this.stream.writableNeedDrain)
      await Promise.race([once(this.stream, 'drain'), once(this.stream, 'close')]);
    this.check();
  }

  async close(): Promise<void> {
    if (!this.stream.writableFinished && !this.stream.destroyed) {
      this.stream.end();
      await Promise.race([once(this.stream, 'finish'), once(this.stream, 'close')]);
    }
    this.check();
  }

  private check(): void {
    const e = this.failure;
    if (e === null) return;
    const code = (e as NodeJS.ErrnoException).code;
    throw new ShoalError(
      code === 'ENOENT' ? 'not-found' : 'io-failure',
      `${this.path}: cannot write (${code ?? e.message})`,
      { cause: e },
    );
  }
}

/**
 * The journal written to an NDJSON file (the `JournalSink` port).
 *
 * @example
 * const journal = journalFile('run.ndjson'); session = new LearningSession({ journal, … }); await journal.close();
 */
export function journalFile(path: string): JournalSink & { close(): Promise<void> } {
  const file = new LineFile(path);
  return {
    write: (record: JournalRecord) => file.write(journalLine(record)),
    flush: () => file.flush(),
    close: () => file.close(),
  };
}

/**
 * Dead letters written to an NDJSON file, one object per line: `source`, `position`, `code`, `reason`
 * (the original bytes, when there are any, as base64 in `bytes`).
 */
export function deadLetterFile(path: string): DeadLetterSink & { close(): Promise<void> } {
  const file = new LineFile(path);
  return {
    write(letter: DeadLetter) {
      const record = {
        source: letter.stream,
        position: Number(letter.position),
        code: letter.code,
        reason: letter.reason,
        ...(letter.bytes === null ? {} : { bytes: Buffer.from(letter.bytes).toString('base64') }),
      };
      file.write(`${JSON.stringify(record)}\n`);
    },
    flush: () => file.flush(),
    close: () => file.close(),
  };
}
