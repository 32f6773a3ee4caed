import { ShoalError } from '../core/index.js';
import { type FrameWriter, type TextLayout, type WriterOptions, WriterPlan } from '../frames/index.js';
import { createFile } from './output-file.js';

/** A line-per-row writer (CSV, NDJSON): each block becomes one write of its lines. */
export async function createTextWriter(
  path: string,
  options: WriterOptions,
  layout: TextLayout,
): Promise<FrameWriter> {
  const plan = new WriterPlan(options);
  const handle = await createFile(path);
  const header = layout.header(plan);
  if (header !== null) await handle.write(`${header}\n`);
  let rowsWritten = 0;
  let closed = false;
  return {
    path,
    get rowsWritten() {
      return rowsWritten;
    },
    async write(block) {
      if (closed) throw new ShoalError('invalid-parameter', `${path}: the writer is closed`);
      plan.check(block, path);
      const lines = new Array<string>(block.rows);
      for (let r = 0; r < block.rows; r++) lines[r] = layout.row(plan, block, r);
      if (block.rows > 0) await handle.write(`${lines.join('\n')}\n`);
      rowsWritten += block.rows;
    },
    async close() {
      if (closed) return;
      closed = true;
      await handle.close();
    },
  };
}
