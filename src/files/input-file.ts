import { type FileHandle, open } from 'node:fs/promises';
import { createGunzip } from 'node:zlib';
import { ShoalError } from '../core/index.js';
import type { LineChunk } from '../frames/index.js';

/** Open a file for reading; a missing or unreadable file is a `ShoalError` naming the path. */
export async function openInput(path: string): Promise<FileHandle> {
  try {
    return await open(path, 'r');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') throw new ShoalError('not-found', `${path}: no such file`, { cause: e });
    if (code === 'EISDIR')
      throw new ShoalError('invalid-input', `${path}: is a directory, not a file`, { cause: e });
    throw new ShoalError('io-failure', `${path}: cannot open (${code ?? String(e)})`, { cause: e });
  }
}

const CHUNK_BYTES = 1 << 16;

/**
 * The lines of a text file, streamed in chunks of about 64 KiB (the file is never read whole, and the
 * per-line cost is a string split, not an await). LF and CRLF both end a line; a byte-order mark at the
 * start is dropped; a last line without a line break still counts. With `gzip` the bytes are inflated
 * on the way (a damaged or truncated gzip stream is an error naming the line reached).
 */
export async function* fileLines(path: string, gzip = false): AsyncGenerator<LineChunk> {
  const handle = await openInput(path);
  const raw = handle.createReadStream({ highWaterMark: CHUNK_BYTES, autoClose: false });
  const stream = gzip ? raw.pipe(createGunzip()) : raw;
  stream.setEncoding('utf8');
  let carry = '';
  let next = 1;
  try {
    for await (const chunk of stream as AsyncIterable<string>) {
      const text =
        next === 1 && carry.length === 0 && chunk.charCodeAt(0) === 0xfeff ? chunk.slice(1) : chunk;
      const lines = (carry + text).split('\n');
      carry = lines.pop()!;
      if (lines.length === 0) continue;
      for (let k = 0; k < lines.length; k++) {
        const line = lines[k]!;
        if (line.charCodeAt(line.length - 1) === 13) lines[k] = line.slice(0, -1);
      }
      yield { lines, first: next };
      next += lines.length;
    }
    if (carry.length > 0) {
      yield { lines: [carry.charCodeAt(carry.length - 1) === 13 ? carry.slice(0, -1) : carry], first: next };
    }
  } catch (e) {
    if (e instanceof ShoalError) throw e;
    throw new ShoalError(
      'io-failure',
      `${path}: read failed after line ${next - 1}: ${gzip && (e as NodeJS.ErrnoException).code?.startsWith('Z_') !== false ? `the gzip stream is damaged or cut short (${(e as Error).message})` : (e as Error).message}`,
      {
        cause: e,
      },
    );
  } finally {
    stream.destroy();
    raw.destroy();
    await handle.close();
  }
}
