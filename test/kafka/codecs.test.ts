import { execFile } from 'node:child_process';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import { lz4Decode, lz4Encode } from '../../src/kafka/codecs.js';
import { scratch } from '../support/cli.js';

const run = promisify(execFile);

/**
 * Shoal's LZ4 frames against the reference implementation's command-line tool (`lz4` 1.9.4, Debian):
 * frames it writes — with and without the content size, with dependent blocks, with block checksums,
 * in 64 KiB blocks — decode to the bytes it was given, and frames Shoal writes (stored blocks) pass its
 * `-t` check and decode with it to the original bytes. (The LZ4 frame format: lz4's
 * `lz4_Frame_format.md`.)
 */

/** 300 KiB that compress, but not to nothing: repeated phrases with seeded noise between them. */
function sample(): Buffer {
  const rng = new Rng(3);
  const out = Buffer.alloc(300 * 1024);
  for (let i = 0; i < out.length; i++) {
    out[i] =
      rng.next() < 0.7
        ? 'the reefer door opened at the dock '.charCodeAt(i % 35)
        : Math.floor(rng.next() * 256);
  }
  return out;
}

describe('LZ4 frames', () => {
  const bytes = sample();

  for (const flags of [[], ['--content-size'], ['-BD'], ['-BX', '--no-frame-crc'], ['-B4']]) {
    it(`reads what the lz4 tool writes with ${flags.join(' ') || 'its defaults'}`, async () => {
      const dir = await scratch();
      await writeFile(join(dir, 'in'), bytes);
      await run('lz4', ['-q', '-f', ...flags, join(dir, 'in'), join(dir, 'in.lz4')]);
      const framed = await readFile(join(dir, 'in.lz4'));
      expect(framed.length).toBeLessThan(bytes.length);
      expect(lz4Decode(framed).equals(bytes)).toBe(true);
    });
  }

  it('writes frames of stored 64 KiB blocks that the lz4 tool checks and reads back', async () => {
    const dir = await scratch();
    const framed = lz4Encode(bytes);
    // Four full blocks and one of 44 KiB, each behind its 4-byte size; 7 header bytes, a 4-byte end mark.
    expect(framed.length).toBe(bytes.length + 5 * 4 + 7 + 4);
    // FLG: version 01 and independent blocks; BD: 64 KiB blocks.
    expect([framed[4], framed[5]]).toEqual([0x60, 0x40]);
    await writeFile(join(dir, 'out.lz4'), framed);
    await run('lz4', ['-q', '-t', join(dir, 'out.lz4')]);
    await run('lz4', ['-q', '-d', '-f', join(dir, 'out.lz4'), join(dir, 'out')]);
    expect((await readFile(join(dir, 'out'))).equals(bytes)).toBe(true);
    expect(lz4Decode(framed).equals(bytes)).toBe(true);
  });

  it('writes noise and an empty input as frames the lz4 tool reads back', async () => {
    const rng = new Rng(5);
    const noise = Buffer.alloc(70_000);
    for (let i = 0; i < noise.length; i++) noise[i] = Math.floor(rng.next() * 256);
    const dir = await scratch();
    for (const [name, input] of [
      ['noise', noise],
      ['empty', Buffer.alloc(0)],
    ] as const) {
      const framed = lz4Encode(input);
      await writeFile(join(dir, `${name}.lz4`), framed);
      await run('lz4', ['-q', '-d', '-f', join(dir, `${name}.lz4`), join(dir, name)]);
      expect((await readFile(join(dir, name))).equals(input)).toBe(true);
      expect(lz4Decode(framed).equals(input)).toBe(true);
    }
  });

  it('refuses bytes that are not an LZ4 frame, and frames cut short, saying what is wrong', async () => {
    expect(() => lz4Decode(Buffer.from('not lz4 at all'))).toThrow(/magic 0x184D2204 expected/);
    const dir = await scratch();
    await writeFile(join(dir, 'in'), bytes);
    await run('lz4', ['-q', '-f', '--content-size', join(dir, 'in'), join(dir, 'in.lz4')]);
    const framed = await readFile(join(dir, 'in.lz4'));
    expect(() => lz4Decode(framed.subarray(0, 1000))).toThrow(/runs past the end/);
    const lying = Buffer.from(framed);
    lying.writeBigUInt64LE(BigInt(bytes.length - 1), 6);
    expect(() => lz4Decode(lying)).toThrow(/the content size says 307199 bytes, its blocks hold 307200/);
  });
});
