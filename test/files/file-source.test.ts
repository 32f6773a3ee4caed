import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { FileSource } from '../../src/files/index.js';
import { FrameDecoder } from '../../src/frames/index.js';
import type { SourceBatch } from '../../src/pipeline/index.js';
import { scratch } from '../support/cli.js';

/** 20,000 CSV rows (a header, then `x,label`), with every 997th row's number unreadable. */
async function file(): Promise<{ path: string; bad: Set<number> }> {
  const bad = new Set<number>();
  const lines = Array.from({ length: 20_000 }, (_, i) => {
    if (i % 997 === 5) bad.add(i);
    return `${i % 997 === 5 ? 'not-a-number' : i},${i % 2 === 0 ? 'a' : 'b'}`;
  });
  const path = join(await scratch(), 'rows.csv');
  await writeFile(path, `x,label\n${lines.join('\n')}\n`);
  return { path, bad };
}

const decoder = () => new FrameDecoder({ label: 'label', features: [{ name: 'x', kind: 'numeric' }] });

async function all(
  source: FileSource,
  from: Map<string, bigint>,
): Promise<{ rows: bigint[]; nexts: bigint[] }> {
  const rows: bigint[] = [];
  const nexts: bigint[] = [];
  for await (const batch of source.open(from) as AsyncIterable<SourceBatch>) {
    expect(batch.stream).toBe(source.name);
    for (let r = 0; r < batch.frame.rows; r++) {
      // The row's position is its index in the file: its own x, written as the row number.
      expect(batch.positions[r]).toBe(BigInt(batch.frame.values[r]!));
      rows.push(batch.positions[r]!);
    }
    nexts.push(batch.next);
  }
  return { rows, nexts };
}

describe('a file as the session’s source', () => {
  it('gives every decoded row its 64-bit index in the file, rejected rows counted, and goes on at a batch boundary', async () => {
    const { path, bad } = await file();
    const source = new FileSource(path, decoder(), 'keep');
    const whole = await all(source, new Map());
    expect(whole.rows).toHaveLength(20_000 - bad.size);
    expect(whole.rows.some((p) => bad.has(Number(p)))).toBe(false);
    expect(whole.nexts.at(-1)).toBe(20_000n);
    expect(whole.nexts.length).toBeGreaterThan(1);
    const at = whole.nexts[0]!;
    const rest = await all(new FileSource(path, decoder(), 'keep'), new Map([[path, at]]));
    expect(rest.rows).toEqual(whole.rows.filter((p) => p >= at));
    expect(rest.nexts).toEqual(whole.nexts.slice(1));
  });

  it('refuses a position inside a batch or past the end, naming the file', async () => {
    const { path } = await file();
    await expect(all(new FileSource(path, decoder(), 'keep'), new Map([[path, 3n]]))).rejects.toThrow(
      /rows\.csv: the checkpoint goes on at row 3, inside the batch of rows 0–/,
    );
    await expect(all(new FileSource(path, decoder(), 'keep'), new Map([[path, 30_000n]]))).rejects.toThrow(
      /rows\.csv: holds 20000 rows, but the checkpoint goes on at row 30000/,
    );
  });
});
