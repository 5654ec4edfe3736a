// The EdgeConv neighbour max's SIMD kernel: the committed bytes are the WebAssembly text assembled (by WABT, the
// WebAssembly project's own toolkit), and it gives the JS loop's bits — on a hand-worked example, on random
// batches the size the encoder runs, and on NaN and signed zeros, where f32x4.pmax is defined as "a < b ? b : a"
// (WebAssembly SIMD specification, pmax).
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { neighbourMax, neighbourMaxJs, wasmKernel } from '../../../src/core/model/ops/neighbour-max';
import { createRng } from '../../../src/core/rng';
import { assemble, moduleSource } from '../../../scripts/build-wasm';

describe('neighbour max on WebAssembly SIMD', () => {
  it('the committed module is the .wat as WABT assembles it', async () => {
    expect(readFileSync('src/core/model/ops/neighbour-max-wasm.ts', 'utf8')).toBe(moduleSource(await assemble()));
  });

  it('runs here (Node 20 has WebAssembly SIMD) and matches a hand-worked example', () => {
    expect(wasmKernel()).not.toBeNull();
    // three rows of four channels; point 0's neighbours are rows 0 and 2, point 1's rows 1, 0 and 2
    const v = Float32Array.from([1, -2, 3, 0, 4, -5, -6, 7, 0.5, 9, 3, -1]);
    const nb = Int32Array.from([0, 2, 0, 1, 0, 2]); // k = 3: point 0 → 0, 2, 0; point 1 → 1, 0, 2
    const out = neighbourMax(v, nb, 2, 4, 3);
    expect(Array.from(out)).toEqual([1, 9, 3, 0, 4, 9, 3, 7]);
  });

  it('gives the JS loop’s bits on batches the encoder runs (32 × 256 points, k = 32, width 64), and grows its memory', () => {
    const rng = createRng(5);
    for (const [P, W, k] of [
      [8192, 64, 32],
      [300, 4, 1],
      [50, 128, 7],
    ]) {
      const v = Float32Array.from({ length: P * W }, () => rng.normal());
      const nb = Int32Array.from({ length: P * k }, () => rng.int(P));
      expect(neighbourMax(v, nb, P, W, k)).toEqual(neighbourMaxJs(v, nb, P, W, k));
    }
  });

  it('NaN and signed zeros come out as the JS loop leaves them', () => {
    const v = Float32Array.from([-0, 0, NaN, 1, 0, -0, 2, NaN]);
    const nb = Int32Array.from([0, 1, 1, 0]);
    const got = neighbourMax(v, nb, 2, 4, 2),
      js = neighbourMaxJs(v, nb, 2, 4, 2);
    expect(Array.from(got).map((x) => (Object.is(x, -0) ? '-0' : String(x)))).toEqual(
      Array.from(js).map((x) => (Object.is(x, -0) ? '-0' : String(x))),
    );
    expect(Object.is(got[0], -0)).toBe(true); // max(-0, +0) keeps the first: "a < b" is false
    expect(got[2]).toBeNaN(); // a NaN first stays (point 0, channel 2)
    expect(got[7]).toBeNaN(); // (point 1, channel 3)
    expect(got[3]).toBe(1); // a NaN later is passed over (point 0, channel 3)
  });

  it('a width that is not a multiple of 4 takes the JS loop', () => {
    const v = Float32Array.from([1, 2, 3, 4, 5, 6]);
    expect(Array.from(neighbourMax(v, Int32Array.from([1, 0]), 2, 3, 1))).toEqual([4, 5, 6, 1, 2, 3]);
  });
});
