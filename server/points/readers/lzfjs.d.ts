/** lzfjs 1.0.1 (BSD-2-Clause), a port of liblzf's lzf_d.c / lzf_c.c; it ships no types. */
declare module 'lzfjs' {
  /** Decompresses a whole LZF block; throws Error('Invalid input') on a malformed block. */
  export function decompress(data: ArrayBuffer | Uint8Array): Uint8Array
  export function compress(data: ArrayBuffer | Uint8Array): Uint8Array
}
