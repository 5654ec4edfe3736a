// Row normalisation (src/core/vectors.ts), checked on the 3-4-5 right triangle (Pythagoras: |(3, 4)| = 5, so the
// unit row is (0.6, 0.8)) and on rows whose length is known by construction.

import { describe, expect, it } from 'vitest';
import { normaliseRows, unitRows } from '../../src/core/vectors';

describe('rows of unit length', () => {
  it('scales each row by its Euclidean length, a zero row stays zero', () => {
    const v = Float32Array.from([3, 4, 0, 0, 0, -5]);
    const out = normaliseRows(v, 2);
    expect(Array.from(out)).toEqual([0.6000000238418579, 0.800000011920929, 0, 0, 0, -1]); // float32 of 0.6, 0.8
    expect(Array.from(v)).toEqual([3, 4, 0, 0, 0, -5]); // the input is left as it was
  });

  it('keeps the array itself when every row is already unit length (or zero), else normalises a copy', () => {
    const unit = Float32Array.from([0.6, 0.8, 0, 0, 1, 0]);
    expect(unitRows(unit, 2)).toBe(unit);
    // 1,024 values a row, each 1/32: length exactly 1 (1,024 / 32² = 1), up to float32 rounding of the sum.
    const wide = new Float32Array(3 * 1024).fill(1 / 32);
    expect(unitRows(wide, 1024)).toBe(wide);
    const oneOff = Float32Array.from([0.6, 0.8, 3, 4]);
    const fixed = unitRows(oneOff, 2);
    expect(fixed).not.toBe(oneOff);
    expect(Array.from(fixed)).toEqual(Array.from(normaliseRows(oneOff, 2)));
    expect(fixed[2]).toBeCloseTo(0.6, 6);
    // A row just outside the tolerance (squared length 1.001) is normalised.
    const near = Float32Array.from([Math.sqrt(1.001), 0]);
    expect(unitRows(near, 2)).not.toBe(near);
  });
});
