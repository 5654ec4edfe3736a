import { describe, expect, it } from 'vitest';
import { chiSquareCritical, closeness, ksCritical, ksStatistic } from './helpers';

describe('closeness (the shared comparison helper can fail)', () => {
  it('accepts values inside the tolerance and rejects values outside it', () => {
    expect(closeness([1, 2], [1.0005, 2], { atol: 1e-3 })).toBeNull();
    expect(closeness([1, 2], [1.01, 2], { atol: 1e-3 })).toMatch(/index 0/);
    expect(closeness(100, 101, { rtol: 0.02 })).toBeNull();
    expect(closeness(100, 103, { rtol: 0.02 })).not.toBeNull();
  });
  it('fails on length mismatch, NaN, and a missing tolerance', () => {
    expect(closeness([1, 2, 3], [1, 2], { atol: 1 })).toMatch(/length/);
    expect(closeness([NaN], [0], { atol: 1e9 })).not.toBeNull();
    expect(closeness([1], [1], {})).toMatch(/tolerance/);
  });
});

describe('distribution statistics', () => {
  it('KS statistic of the midpoint grid (i + ½)/n against U(0,1) is exactly 1/(2n)', () => {
    const n = 100;
    const grid = Array.from({ length: n }, (_, i) => (i + 0.5) / n);
    expect(ksStatistic(grid, (x) => x)).toBeCloseTo(0.5 / n, 12);
  });
  it('KS detects a skewed sample', () => {
    const n = 2000;
    const skewed = Array.from({ length: n }, (_, i) => ((i + 0.5) / n) ** 2);
    expect(ksStatistic(skewed, (x) => x)).toBeGreaterThan(ksCritical(n));
  });
  it('Wilson–Hilferty chi-square critical values match printed tables (NIST/SEMATECH e-Handbook, α = 0.001)', () => {
    // Table values: k = 10 → 29.588, k = 50 → 86.661, k = 99 → 148.230.
    expect(chiSquareCritical(10)).toBeCloseTo(29.588, 0);
    expect(chiSquareCritical(50)).toBeCloseTo(86.661, 0);
    expect(Math.abs(chiSquareCritical(99) - 148.23)).toBeLessThan(0.5);
  });
});
