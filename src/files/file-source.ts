import { ShoalError } from '../core/index.js';
import type { FrameDecoder, FrameFormat } from '../frames/index.js';
import type { LabelSource, Positions, Source, SourceBatch } from '../pipeline/index.js';
import { readFrames } from './formats.js';

/**
 * A recorded file (Arrow IPC, CSV, NDJSON) as the session's `Source` of events — or, read with a labels
 * decoder, as its `LabelSource`. The file is one stream, named by its path; a row's position is its
 * index among the file's rows (decoded or rejected, from 0), and a batch's `next` is the number of rows
 * consumed once it is handled: 64-bit values, as a Kafka offset is.
 *
 * `open(from)` goes on at `from.get(path)` (from the start when absent). A file is cut into the same
 * batches on every read, so a resume position is a batch boundary; one inside a batch, or past the end,
 * is refused with a message naming the file. The positions are kept in a buffer the source reuses: a
 * batch is valid until the next one is read.
 *
 * @example
 * const events = new FileSource('legs.arrow', decoder, 'keep');
 * for await (const batch of events.open(new Map())) session.score(batch.frame, decoder.classes);
 */
export class FileSource implements Source, LabelSource {
  readonly name: string;
  private readonly decoder: FrameDecoder;
  private readonly rejects: 'throw' | 'keep';
  private readonly format: { readonly format?: FrameFormat };
  private positions = new BigInt64Array(0);
  /** `positions` seen as 32-bit words. */
  private words = new Uint32Array(0);

  /** `format` names the file's format when its extension does not say. */
  constructor(path: string, decoder: FrameDecoder, rejects: 'throw' | 'keep', format?: FrameFormat) {
    this.name = path;
    this.decoder = decoder;
    this.rejects = rejects;
    this.format = format === undefined ? {} : { format };
  }

  async *open(from: Positions): AsyncGenerator<SourceBatch> {
    const path = this.name;
    const start = from.get(path) ?? 0n;
    let consumed = 0n;
    for await (const { frame, rejected } of readFrames(path, this.decoder, {
      rejects: this.rejects,
      ...this.format,
    })) {
      const size = BigInt(frame.rows + rejected.length);
      const first = consumed;
      consumed += size;
      if (consumed <= start && start > 0n) continue;
      if (first < start) {
        throw new ShoalError(
          'invalid-snapshot',
          `${path}: the checkpoint goes on at row ${start}, inside the batch of rows ${first}–${consumed - 1n}: is this the file the run was started on?`,
        );
      }
      yield {
        frame,
        rejected,
        stream: path,
        positions: this.place(frame.origin.positions, rejected, first),
        next: consumed,
      };
    }
    if (consumed < start) {
      throw new ShoalError(
        'invalid-snapshot',
        `${path}: holds ${consumed} rows, but the checkpoint goes on at row ${start}: is this the file the run was started on?`,
      );
    }
  }

  /** Each decoded row's index in the file: rows before the batch, then its rank among the batch's rows. */
  private place(
    origin: ArrayLike<number>,
    rejected: readonly { readonly index: number }[],
    first: bigint,
  ): BigInt64Array {
    const rows = origin.length;
    if (this.positions.length < rows) {
      this.positions = new BigInt64Array(Math.max(rows, 2 * this.positions.length));
      this.words = new Uint32Array(this.positions.buffer);
    }
    // A file's row index fits a double exactly; each position is written as its two 32-bit words
    // (little-endian, as on every platform Node runs on) so that no BigInt is made per row.
    const base = Number(first);
    const words = this.words;
    let skipped = 0;
    for (let r = 0; r < rows; r++) {
      while (skipped < rejected.length && rejected[skipped]!.index < origin[r]!) skipped++;
      const at = base + r + skipped;
      words[2 * r] = at % 0x1_0000_0000;
      words[2 * r + 1] = Math.floor(at / 0x1_0000_0000);
    }
    return this.positions.subarray(0, rows);
  }
}
