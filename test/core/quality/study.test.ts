// The augmentation study: its 95 % intervals are Wilson's (Wilson 1927), checked on worked examples by hand; a
// sample of queries is seeded and looked up in the whole library.
import { describe, expect, it } from 'vitest';
import { runStudy, sampleQueries, STUDY_STRENGTHS, wilsonInterval } from '../../../src/core/quality/study';
import { demoModelParts } from '../../meshes';

describe('Wilson score interval (Wilson 1927)', () => {
  it('0 of 10: [0, 0.2775] — z = 1.96, upper = (z²/2 + z·√(z²/4))/(n + z²) = 3.8416/13.8416', () => {
    const [lo, hi] = wilsonInterval(0, 10);
    expect(lo).toBe(0);
    expect(hi).toBeCloseTo(3.8416 / 13.8416, 6); // 0.277540
  });
  it('5 of 10: centred on 0.5, half-width 1.96·√(0.025 + 0.009604)/1.38416 = 0.263410', () => {
    const [lo, hi] = wilsonInterval(5, 10);
    expect(lo).toBeCloseTo(0.23659, 5);
    expect(hi).toBeCloseTo(0.76341, 5);
  });
  it('300 queries at a rate of one half: ±0.056 (the default sample’s widest interval)', () => {
    const [lo, hi] = wilsonInterval(150, 300);
    expect((hi - lo) / 2).toBeCloseTo(0.0561, 3);
  });
});

describe('the study on a sample of queries', () => {
  it('a seeded sample: that many distinct parts, ascending, the same for the same seed; all of them when asked for more', () => {
    const a = sampleQueries(1000, 300, 4);
    expect(a).toHaveLength(300);
    expect(new Set(a).size).toBe(300);
    expect([...a].sort((x, y) => x - y)).toEqual(a);
    expect(sampleQueries(1000, 300, 4)).toEqual(a);
    expect(sampleQueries(1000, 300, 5)).not.toEqual(a);
    expect(sampleQueries(7, 300, 4)).toEqual([0, 1, 2, 3, 4, 5, 6]);
  });

  it('looks each sampled view up in the whole library: unchanged views (strength 0) find themselves, with their interval', async () => {
    const parts = demoModelParts(256).slice(0, 40);
    const labels = parts.map((_, i) => `f${i % 5}`);
    const rows = await runStudy({
      parts,
      labels,
      points: 256,
      pose: 'principal-axes',
      encoders: {}, // D2 alone: no model needed
      kinds: ['jitter'],
      strengths: [0, 1],
      queries: 12,
    });
    expect(rows.map((r) => [r.method, r.strength, r.queries])).toEqual([
      ['d2', 0, 12],
      ['d2', 1, 12],
    ]);
    expect(rows[0].instance_top1).toBe(1); // the same points and the same D2 pairs as the part itself
    expect(rows[0].mean_similarity).toBe(1);
    expect(rows[0].instance_top1_ci95).toEqual(wilsonInterval(12, 12));
    expect(rows[1].mean_chamfer).toBeGreaterThan(0);
  });

  it('a setting’s rows do not depend on which other strengths are listed (the default three are rows of the finer five)', async () => {
    const parts = demoModelParts(256).slice(0, 30);
    const labels = parts.map((_, i) => `f${i % 5}`);
    const base = {
      parts,
      labels,
      points: 256,
      pose: 'principal-axes' as const,
      encoders: {},
      kinds: ['jitter', 'scale'] as const,
      queries: 10,
    };
    const three = await runStudy({ ...base, strengths: STUDY_STRENGTHS });
    const five = await runStudy({ ...base, strengths: [0, 0.25, 0.5, 0.75, 1] });
    expect(STUDY_STRENGTHS).toEqual([0, 0.5, 1]);
    const pick = (rows: typeof five) => rows.filter((r) => STUDY_STRENGTHS.includes(r.strength as 0 | 0.5 | 1));
    expect(pick(five)).toEqual(three);
    expect(five.length).toBeGreaterThan(three.length);
  });
});
