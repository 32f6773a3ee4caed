import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { expect } from 'vitest';
import { ShoalError } from '../../src/core/index.js';
import { cloneFrame, type Decoded, type Frame, type Rejection } from '../../src/frames/index.js';

/** Helpers shared by the frames tests. */

export const FIXTURES = join(dirname(fileURLToPath(import.meta.url)), 'fixtures');

export function fixture(name: string): string {
  return join(FIXTURES, name);
}

/** A fresh temporary directory and a function that removes it. */
export function scratchDir(): { dir: string; remove: () => void } {
  const dir = mkdtempSync(join(tmpdir(), 'shoal-frames-'));
  return { dir, remove: () => rmSync(dir, { recursive: true, force: true }) };
}

/** Every batch of a read, each frame cloned (decoders reuse their buffers). */
export async function collect(
  batches: AsyncIterable<Decoded> | Iterable<Decoded>,
): Promise<{ frames: Frame[]; rejected: Rejection[] }> {
  const frames: Frame[] = [];
  const rejected: Rejection[] = [];
  for await (const batch of batches) {
    frames.push(cloneFrame(batch.frame));
    rejected.push(...batch.rejected);
  }
  return { frames, rejected };
}

/** The rows of several frames as one frame (same schema). */
export function concat(frames: readonly Frame[]): {
  rows: number;
  values: Float64Array;
  labels: Float64Array | null;
  ids: string[] | null;
} {
  const rows = frames.reduce((s, f) => s + f.rows, 0);
  const width = frames[0]!.width;
  const values = new Float64Array(rows * width);
  const labels = frames[0]!.labels === null ? null : new Float64Array(rows);
  const ids = frames[0]!.ids === null ? null : ([] as string[]);
  let at = 0;
  for (const f of frames) {
    values.set(f.values, at * width);
    labels?.set(f.labels!, at);
    ids?.push(...f.ids!);
    at += f.rows;
  }
  return { rows, values, labels, ids };
}

/** Bitwise equality of two double arrays (so NaN equals NaN and −0 differs from 0). */
export function sameDoubles(a: Float64Array, b: Float64Array): boolean {
  return (
    a.length === b.length &&
    Buffer.from(a.buffer, a.byteOffset, a.byteLength).equals(
      Buffer.from(b.buffer, b.byteOffset, b.byteLength),
    )
  );
}

/** Expect `run` to fail with a ShoalError of `code` whose message matches every pattern. */
export async function expectShoalError(
  run: () => unknown,
  code: string,
  ...patterns: readonly RegExp[]
): Promise<ShoalError> {
  let thrown: unknown;
  try {
    await run();
  } catch (e) {
    thrown = e;
  }
  expect(thrown, 'expected a ShoalError').toBeInstanceOf(ShoalError);
  const error = thrown as ShoalError;
  expect(error.code).toBe(code);
  for (const p of patterns) expect(error.message).toMatch(p);
  return error;
}
