import { describe, expect, it } from 'vitest';
import { augmentSubset, PRESETS } from '../../../src/core/points/augment';
import { makeCloud } from '../../../src/core/points/cloud';
import { localShape } from '../../../src/core/points/local';
import { randomRotation, transformPoints } from '../../../src/core/points/rotation';
import { createRng } from '../../../src/core/rng';
import { expectClose } from '../../helpers';

// Dimensionality features of Weinmann, Jutzi & Mallet 2015 (ISPRS J. 105): linearity (λ1 − λ2)/λ1, planarity
// (λ2 − λ3)/λ1, scattering λ3/λ1 from the eigenvalues of the neighbourhood covariance. Reference values by hand
// from covariances that are diagonal by symmetry.
describe('local shape (Weinmann et al. 2015 eigenvalue features)', () => {
  it('a 4 × 4 grid with spacings 2 and 1: λ = (5, 1.25, 0) per unit, so 0.75 / 0.25 / 0 at every point', () => {
    // Coordinates (±0.5, ±1.5)·spacing: mean square 1.25·spacing², covariance diag(1.25·4, 1.25·1, 0).
    const pts: number[] = [];
    for (const i of [-1.5, -0.5, 0.5, 1.5]) for (const j of [-1.5, -0.5, 0.5, 1.5]) pts.push(2 * i, j, 0);
    const f = localShape(Float32Array.from(pts), 16);
    for (let k = 0; k < 16; k++) {
      expectClose(f[3 * k], 0.75, { atol: 1e-6 });
      expectClose(f[3 * k + 1], 0.25, { atol: 1e-6 });
      expectClose(f[3 * k + 2], 0, { atol: 1e-6 });
    }
  });
  it('the corners of a 6 × 4 × 2 box: λ ∝ (9, 4, 1), so 5/9, 3/9, 1/9', () => {
    const pts: number[] = [];
    for (const x of [-3, 3]) for (const y of [-2, 2]) for (const z of [-1, 1]) pts.push(x, y, z);
    const f = localShape(Float32Array.from(pts), 16); // k is capped at the 8 points there are
    for (let k = 0; k < 8; k++) {
      expectClose(f[3 * k], 5 / 9, { atol: 1e-6 });
      expectClose(f[3 * k + 1], 3 / 9, { atol: 1e-6 });
      expectClose(f[3 * k + 2], 1 / 9, { atol: 1e-6 });
    }
  });
  it('points along a line are purely linear; a repeated point is all scattering, not NaN', () => {
    const line = Float32Array.from({ length: 60 }, (_, i) => (i % 3 === 0 ? i / 3 : i % 3 === 1 ? (2 * i) / 3 : 0));
    const f = localShape(line, 8);
    for (let k = 0; k < 20; k++) { expectClose(f[3 * k], 1, { atol: 1e-6 }); expectClose(f[3 * k + 2], 0, { atol: 1e-6 }); }
    expect([...localShape(new Float32Array(12).fill(0.5), 4)]).toEqual([0, 0, 1, 0, 0, 1, 0, 0, 1, 0, 0, 1]);
  });
  it('does not change when the cloud is turned, moved and scaled (same neighbours, scaled covariance)', () => {
    const rng = createRng(5);
    const pts = Float32Array.from({ length: 900 }, () => rng.uniform(-1, 1));
    const moved = transformPoints(randomRotation(rng), pts).map((v, i) => 2.5 * v + (i % 3) * 0.3);
    const a = localShape(pts), b = localShape(Float32Array.from(moved));
    for (let i = 0; i < a.length; i++) expectClose(b[i], a[i], { atol: 1e-4 });
  });
});

describe('augmentation reports which pool point each view point copies', () => {
  it('after dropout and occlusion (no motion), each view point is its origin pool point', () => {
    const rng = createRng(2);
    const pool = makeCloud(Float32Array.from({ length: 600 }, () => rng.uniform(-1, 1)));
    const indices = Uint32Array.from({ length: 100 }, (_, i) => 2 * i);
    const origin = new Uint32Array(100);
    const steps = PRESETS['scan-like'].steps.filter((s) => s.kind === 'dropout' || s.kind === 'occlude').map((s) => ({ ...s, probability: 1 }));
    const v = augmentSubset(pool, indices, { version: 1, upAxis: 'z', steps }, rng, origin);
    expect(new Set(origin).size).toBeLessThan(100); // some points were replaced by copies
    for (let i = 0; i < 100; i++) for (let a = 0; a < 3; a++) expect(v.positions[3 * i + a]).toBe(pool.positions[3 * origin[i] + a]);
  });
});
