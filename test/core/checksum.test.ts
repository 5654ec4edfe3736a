import { describe, expect, it } from 'vitest';
import { crc32 } from '../../src/core/checksum';
import { zlibSync } from '../cli/zlib-crc';

describe('CRC-32 (IEEE 802.3, reflected)', () => {
  it('gives the catalogued check value for "123456789", 0xCBF43926 (Williams, "A painless guide to CRC error detection", 1993)', () => {
    expect(crc32(new TextEncoder().encode('123456789'))).toBe(0xcbf43926);
    expect(crc32(new Uint8Array(0))).toBe(0);
  });
  it('agrees with zlib on random buffers', () => {
    let x = 12345;
    for (const n of [1, 7, 100, 4096, 100_003]) {
      const b = Uint8Array.from({ length: n }, () => (x = (Math.imul(x, 1103515245) + 12345) >>> 0) >>> 24);
      expect(crc32(b)).toBe(zlibSync(b));
    }
  });
});
