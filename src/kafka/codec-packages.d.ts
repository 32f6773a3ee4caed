/**
 * Type declarations for the two codec packages `codecs.ts` uses; they ship JavaScript only. Only the
 * calls made here are declared.
 */
declare module 'snappyjs' {
  /** One raw snappy block → its bytes (a Buffer for a Buffer). */
  export function uncompress(compressed: Uint8Array): Uint8Array;
  /** Bytes → one raw snappy block. */
  export function compress(uncompressed: Uint8Array): Uint8Array;
}

declare module 'lz4js' {
  /**
   * Decode the LZ4 block `src[from, from + length)` into `dst` from `written` on; returns the new
   * `written`. Earlier output in `dst` serves as the dictionary (dependent blocks).
   */
  export function decompressBlock(
    src: Uint8Array,
    dst: Uint8Array,
    from: number,
    length: number,
    written: number,
  ): number;
}

declare module 'lz4js/xxh32.js' {
  /** xxHash32 of `src[index, index + length)` with `seed`. */
  export function hash(seed: number, src: Uint8Array, index: number, length: number): number;
}
