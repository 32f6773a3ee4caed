import { createRequire } from 'node:module';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import { crc32c } from '../../src/kafka/crc32c.js';
import { kafkajsModule } from '../../src/kafka/kafkajs.js';

const require = createRequire(import.meta.url);
/** kafkajs 2.2.4's own byte-at-a-time CRC-32C, loaded by its file (the loader replaces its index). */
const kafkajsCrc = require('kafkajs/src/protocol/recordBatch/crc32C/crc32C.js') as (b: Buffer) => number;

function bytes(n: number, seed: number): Buffer {
  const rng = new Rng(seed);
  const out = Buffer.alloc(n);
  for (let i = 0; i < n; i++) out[i] = Math.floor(rng.next() * 256);
  return out;
}

describe('crc32c', () => {
  it('gives the published check values', () => {
    // The check value of CRC-32C over the nine ASCII digits (the CRC catalogue's CRC-32/ISCSI; from memory).
    expect(crc32c(Buffer.from('123456789'))).toBe(0xe3069283);
    // RFC 3720 (iSCSI), appendix B.4, the CRC of 32 bytes (from memory).
    expect(crc32c(Buffer.alloc(32, 0))).toBe(0x8a9136aa);
    expect(crc32c(Buffer.alloc(32, 0xff))).toBe(0x62a8ab43);
    expect(crc32c(Buffer.from(Array.from({ length: 32 }, (_, i) => i)))).toBe(0x46dd794e);
    expect(crc32c(Buffer.from(Array.from({ length: 32 }, (_, i) => 31 - i)))).toBe(0x113fdb5c);
    expect(crc32c(new Uint8Array(0))).toBe(0);
  });

  it('equals kafkajs’s own CRC-32C on every length up to 300, at odd offsets, and on 1 MiB', () => {
    const data = bytes(1 << 20, 11);
    for (let n = 0; n <= 300; n++) {
      for (const at of [0, 1, 3, 7]) {
        const slice = data.subarray(at, at + n);
        expect(crc32c(slice), `length ${n} at ${at}`).toBe(kafkajsCrc(slice));
      }
    }
    expect(crc32c(data)).toBe(kafkajsCrc(data));
  });

  it('is what kafkajs checksums its record batches with, once Shoal has loaded it', () => {
    kafkajsModule();
    const index = require.resolve('kafkajs/src/protocol/recordBatch/crc32C/index.js');
    expect(require.cache[index]?.exports).toBe(crc32c);
  });
});
