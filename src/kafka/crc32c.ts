/**
 * CRC-32C (Castagnoli), the checksum of every Kafka record batch (magic 2): the reflected polynomial
 * 0x82F63B78, initial value and final XOR 0xFFFFFFFF (RFC 3720, iSCSI, appendix B.4; from memory).
 * Computed eight bytes per step by "slicing-by-8" (Kounavis & Berry, 2005, from memory): eight tables,
 * where table s maps a byte to the CRC of that byte followed by s zero bytes, so the CRC of eight bytes
 * is the XOR of eight independent lookups instead of a chain of eight dependent ones. About 2.8× the
 * speed of the byte-at-a-time loop kafkajs ships, which was some 6% of a busy `serve`'s main thread
 * (it checksums every scores batch it produces).
 *
 * @example
 * crc32c(Buffer.from('123456789')); // 0xe3069283, the check value of CRC-32C
 */
export function crc32c(bytes: Uint8Array): number {
  const t = TABLES;
  const n = bytes.length;
  const whole = n - (n & 7);
  let crc = -1;
  let i = 0;
  for (; i < whole; i += 8) {
    const low = crc ^ (bytes[i]! | (bytes[i + 1]! << 8) | (bytes[i + 2]! << 16) | (bytes[i + 3]! << 24));
    crc =
      t[7 * 256 + (low & 0xff)]! ^
      t[6 * 256 + ((low >>> 8) & 0xff)]! ^
      t[5 * 256 + ((low >>> 16) & 0xff)]! ^
      t[4 * 256 + (low >>> 24)]! ^
      t[3 * 256 + bytes[i + 4]!]! ^
      t[2 * 256 + bytes[i + 5]!]! ^
      t[256 + bytes[i + 6]!]! ^
      t[bytes[i + 7]!]!;
  }
  for (; i < n; i++) crc = t[(crc ^ bytes[i]!) & 0xff]! ^ (crc >>> 8);
  return (crc ^ -1) >>> 0;
}

/** The reflected CRC-32C polynomial. */
const POLYNOMIAL = 0x82f63b78;

/** Table s (entries s·256 … s·256 + 255): the CRC register after a byte and then s zero bytes. */
const TABLES = ((): Int32Array => {
  const t = new Int32Array(8 * 256);
  for (let b = 0; b < 256; b++) {
    let c = b;
    for (let k = 0; k < 8; k++) c = c & 1 ? (c >>> 1) ^ POLYNOMIAL : c >>> 1;
    t[b] = c;
  }
  for (let s = 1; s < 8; s++) {
    for (let b = 0; b < 256; b++) {
      const before = t[(s - 1) * 256 + b]!;
      t[s * 256 + b] = (before >>> 8) ^ t[before & 0xff]!;
    }
  }
  return t;
})();
