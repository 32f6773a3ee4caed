import { decompress as zstdDecompress } from 'fzstd';
import { decompressBlock } from 'lz4js';
import { hash as xxh32 } from 'lz4js/xxh32.js';
import { compress as snappyCompress, uncompress as snappyUncompress } from 'snappyjs';
import { kafkajsModule } from './kafkajs.js';

/**
 * The record-batch codecs kafkajs lacks. kafkajs decodes only gzip; a batch compressed with another
 * codec makes its fetch throw, and the consumer cannot step over a batch it cannot read, so one message
 * from any producer would stop the service. Each codec here is pure JavaScript (no native build):
 *
 * - zstd (Zstandard, RFC 8878) through fzstd, a decoder only: the service never compresses with zstd.
 * - snappy through snappyjs. Kafka's Java client wraps snappy in the framing of snappy-java's stream
 *   (`SnappyOutputStream`): a 16-byte header — the magic `0x82 "SNAPPY" 0x00`, then a version and a
 *   minimum compatible version as 32-bit big-endian integers — followed by chunks, each a 32-bit
 *   big-endian length and one raw snappy block. librdkafka writes a single raw snappy block. Both are
 *   read; kafkajs producers here write the raw form, which the broker and every client accept.
 * - lz4: Kafka's record batches carry the LZ4 frame format (lz4's `lz4_Frame_format.md`): the magic
 *   `0x184D2204`; a descriptor — FLG (version 01, block independence, block checksum, content size,
 *   content checksum), BD (the largest block: 64 KiB · 4^(n − 4) for n = 4…7), the content size as 8
 *   little-endian bytes when FLG says so, and HC, the second byte of the xxHash32 of the descriptor; then
 *   blocks, each a 32-bit little-endian size (high bit: stored as it is) and its bytes, followed by a
 *   4-byte checksum when FLG says so; an end mark (size 0), and a 4-byte content checksum when FLG says
 *   so. The frame is walked here and each block decoded with lz4js's block decoder (lz4js's own frame
 *   reader skips a block checksum before the block rather than after it, and reads the content size
 *   with 32-bit shifts). Checksums are not verified: each record batch carries its own CRC-32C.
 *   Writing (only for clients that produce with kafkajs; the service never compresses) stores every
 *   block as it is: lz4js's block compressor starts matches closer to a block's end than the format
 *   allows (the reference `lz4` tool refuses its blocks), and a stored block is valid everywhere.
 *
 * `registerCodecs` is idempotent; `createKafka` calls it, and tests that produce compressed batches
 * through kafkajs call it too.
 */

/** snappy-java's stream magic (the first 8 of its 16 header bytes). */
const SNAPPY_FRAMED = Buffer.from([0x82, 0x53, 0x4e, 0x41, 0x50, 0x50, 0x59, 0x00]);
const SNAPPY_HEADER_BYTES = 16;
const LZ4_MAGIC = 0x184d2204;
const LZ4_BLOCK_CHECKSUM = 0x10;
const LZ4_CONTENT_SIZE = 0x08;
const LZ4_CONTENT_CHECKSUM = 0x04;
/** FLG as written: version 01 (bits 7–6) and independent blocks (bit 5); no checksums, no size. */
const LZ4_FLG = 0x60;
/** BD as written: blocks of at most 64 KiB (bits 6–4 = 4). */
const LZ4_BD = 0x40;
const LZ4_BLOCK = 64 * 1024;
/** A block stored as it is: the high bit of its size word. */
const LZ4_STORED = 0x80000000;

export function registerCodecs(): void {
  const { CompressionCodecs, CompressionTypes } = kafkajsModule();
  CompressionCodecs[CompressionTypes.ZSTD] = () => ({
    compress: async () => {
      throw new Error('shoal writes gzip, snappy, lz4 or uncompressed batches, not zstd');
    },
    decompress: async (buffer: Buffer) => Buffer.from(zstdDecompress(buffer)),
  });
  CompressionCodecs[CompressionTypes.Snappy] = () => ({
    compress: async (encoder: { buffer: Buffer }) => Buffer.from(snappyCompress(encoder.buffer)),
    decompress: async (buffer: Buffer) => snappyDecode(buffer),
  });
  CompressionCodecs[CompressionTypes.LZ4] = () => ({
    compress: async (encoder: { buffer: Buffer }) => lz4Encode(encoder.buffer),
    decompress: async (buffer: Buffer) => lz4Decode(buffer),
  });
}

/** A snappy record-batch body: snappy-java's framed stream, or one raw block. */
export function snappyDecode(buffer: Buffer): Buffer {
  if (buffer.length < SNAPPY_HEADER_BYTES || !buffer.subarray(0, 8).equals(SNAPPY_FRAMED)) {
    return Buffer.from(snappyUncompress(buffer));
  }
  const chunks: Buffer[] = [];
  let at = SNAPPY_HEADER_BYTES;
  while (at < buffer.length) {
    if (at + 4 > buffer.length) throw new Error(`snappy stream: a chunk length cut short at byte ${at}`);
    const size = buffer.readUInt32BE(at);
    at += 4;
    if (at + size > buffer.length) {
      throw new Error(
        `snappy stream: a chunk of ${size} bytes at byte ${at} runs past the end (${buffer.length})`,
      );
    }
    chunks.push(Buffer.from(snappyUncompress(buffer.subarray(at, at + size))));
    at += size;
  }
  return Buffer.concat(chunks);
}

/** An lz4 record-batch body: one LZ4 frame (see the head of this file). */
export function lz4Decode(frame: Buffer): Buffer {
  const fail = (why: string): never => {
    throw new Error(`lz4 frame of ${frame.length} bytes: ${why}`);
  };
  if (frame.length < 7 || frame.readUInt32LE(0) !== LZ4_MAGIC) fail('magic 0x184D2204 expected');
  const flg = frame[4]!;
  const bd = frame[5]!;
  if (flg >> 6 !== 1) fail(`version ${flg >> 6} in FLG, 1 expected`);
  const blockBits = (bd >> 4) & 7;
  if (blockBits < 4) fail(`block size code ${blockBits} in BD, 4 to 7 expected`);
  const largest = 1 << (2 * blockBits + 8);
  const blockSum = (flg & LZ4_BLOCK_CHECKSUM) !== 0 ? 4 : 0;
  let at = 6;
  let size = -1;
  if ((flg & LZ4_CONTENT_SIZE) !== 0) {
    if (frame.length < 15) fail('cut short in its content size');
    size = Number(frame.readBigUInt64LE(6));
    at += 8;
  }
  at++; // HC
  // The output's size: the content size when given, else what the blocks can hold at most.
  const blocks: { at: number; bytes: number; stored: boolean }[] = [];
  let bound = 0;
  for (;;) {
    if (at + 4 > frame.length) fail(`a block size cut short at byte ${at}`);
    const word = frame.readUInt32LE(at);
    at += 4;
    if (word === 0) break;
    const stored = (word & LZ4_STORED) !== 0;
    const bytes = word & ~LZ4_STORED;
    if (bytes > largest) fail(`a block of ${bytes} bytes at byte ${at}, more than BD allows (${largest})`);
    if (at + bytes + blockSum > frame.length)
      fail(`a block of ${bytes} bytes at byte ${at} runs past the end`);
    blocks.push({ at, bytes, stored });
    bound += stored ? bytes : largest;
    at += bytes + blockSum;
  }
  if ((flg & LZ4_CONTENT_CHECKSUM) !== 0 && at + 4 > frame.length) fail('cut short in its content checksum');
  if (size > bound) fail(`the content size says ${size} bytes, more than its blocks can hold (${bound})`);
  const out = Buffer.alloc(size >= 0 ? size : bound);
  let written = 0;
  for (const b of blocks) {
    if (b.stored) {
      frame.copy(out, written, b.at, b.at + b.bytes);
      written += b.bytes;
    } else {
      written = decompressBlock(frame, out, b.at, b.bytes, written);
    }
  }
  if (size >= 0 && written !== size) fail(`the content size says ${size} bytes, its blocks hold ${written}`);
  return out.subarray(0, written);
}

/** Bytes → one LZ4 frame of stored 64 KiB blocks (see the head of this file). */
export function lz4Encode(src: Uint8Array): Buffer {
  const blocks = Math.ceil(src.length / LZ4_BLOCK);
  const out = Buffer.alloc(7 + blocks * (4 + LZ4_BLOCK) + 4);
  out.writeUInt32LE(LZ4_MAGIC, 0);
  out[4] = LZ4_FLG;
  out[5] = LZ4_BD;
  out[6] = (xxh32(0, out, 4, 2) >>> 8) & 0xff;
  let at = 7;
  for (let from = 0; from < src.length; from += LZ4_BLOCK) {
    const size = Math.min(LZ4_BLOCK, src.length - from);
    out.writeUInt32LE((LZ4_STORED | size) >>> 0, at);
    out.set(src.subarray(from, from + size), at + 4);
    at += 4 + size;
  }
  out.writeUInt32LE(0, at);
  return out.subarray(0, at + 4);
}
