// Node's zlib.crc32 (zlib's implementation, Node >= 20.15) as the reference CRC-32.

import * as zlib from 'node:zlib';

export function zlibSync(bytes: Uint8Array): number {
  const f = (zlib as unknown as { crc32?: (b: Uint8Array) => number }).crc32;
  if (!f) throw new Error('this Node has no zlib.crc32 (needs Node 20.15 or newer)');
  return f(bytes) >>> 0;
}
