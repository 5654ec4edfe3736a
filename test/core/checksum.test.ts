import { describe, expect, it } from 'vitest';
import { crc32, sha256Hex } from '../../src/core/checksum';
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

describe('SHA-256', () => {
  // FIPS 180-2, appendix B.1 and B.2: the one-block and two-block examples.
  it('gives the published digests of "abc" and the 448-bit message', async () => {
    expect(await sha256Hex(new TextEncoder().encode('abc'))).toBe(
      'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad',
    );
    expect(await sha256Hex(new TextEncoder().encode('abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq'))).toBe(
      '248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1',
    );
  });
});
