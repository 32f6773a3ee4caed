import { open } from 'node:fs/promises';
import { MessageHeader } from 'apache-arrow';
import { Message, type RecordBatch } from 'apache-arrow/ipc/metadata/message';
import type { FrameFormat } from '../frames/index.js';
import { readFooter } from './arrow-footer.js';
import { formatOf } from './formats.js';

/** An encapsulated IPC message starts with a continuation marker and its metadata length. */
const PREFIX = 8;
const CHUNK = 1 << 20;

/**
 * How many rows a recorded file holds, cheaply, for a progress bar's ETA: an Arrow IPC file's footer
 * lists its record batches and each batch's metadata gives its length, so only headers are read; a
 * CSV or NDJSON file's lines are counted. Null when it cannot be told without decoding (an Arrow IPC
 * stream). Never throws for a readable file; a damaged one is reported by the reader proper.
 */
export async function countRows(path: string, format?: FrameFormat): Promise<number | null> {
  try {
    const chosen = formatOf(path, format);
    return chosen === 'arrow' ? await arrowFileRows(path) : await textRows(path, chosen === 'csv');
  } catch {
    return null;
  }
}

async function arrowFileRows(path: string): Promise<number | null> {
  const file = await open(path, 'r');
  try {
    const footer = await readFooter(file);
    if (footer === null) return null;
    let rows = 0;
    for (const block of footer.recordBatches()) {
      const meta = Buffer.alloc(block.metaDataLength);
      await file.read(meta, 0, block.metaDataLength, Number(block.offset));
      const message = Message.decode(meta.subarray(PREFIX));
      if (message.headerType !== MessageHeader.RecordBatch) return null;
      rows += (message.header() as RecordBatch).length;
    }
    return rows;
  } finally {
    await file.close();
  }
}

async function textRows(path: string, header: boolean): Promise<number> {
  const file = await open(path, 'r');
  try {
    const chunk = Buffer.alloc(CHUNK);
    let lines = 0;
    let last = 10;
    for (;;) {
      const { bytesRead } = await file.read(chunk, 0, CHUNK, null);
      if (bytesRead === 0) break;
      for (let i = 0; i < bytesRead; i++) if (chunk[i] === 10) lines++;
      last = chunk[bytesRead - 1]!;
    }
    if (last !== 10) lines++;
    return Math.max(0, lines - (header ? 1 : 0));
  } finally {
    await file.close();
  }
}
