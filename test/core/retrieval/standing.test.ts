// A result's standing: the empirical distribution function of the query's similarities (share strictly below).

import { describe, expect, it } from 'vitest';
import { shareBelow, standingWords } from '../../../src/core/retrieval/standing';
import { createRng } from '../../../src/core/rng';

describe('standing of a result among the other parts (empirical distribution, strict inequality)', () => {
  it('a worked example: scores 0.1 (the query), 0.5, 0.9, 0.3, 0.5', () => {
    const scores = [0.1, 0.5, 0.9, 0.3, 0.5];
    // Others of 0.9 (leaving out the query and itself): 0.5, 0.3, 0.5 → all 3 below → 1.
    // Others of 0.5 (index 1): 0.9, 0.3, 0.5 → only 0.3 below (the tie is not below) → 1/3.
    // Others of 0.3: 0.5, 0.9, 0.5 → none below → 0.
    expect(shareBelow(scores, [2, 1, 4, 3], 0)).toEqual([1, 1 / 3, 1 / 3, 0]);
    // A query from outside the library (nothing left out): 0.9 stands above the 4 others.
    expect(shareBelow(scores, [2, 0], -1)).toEqual([1, 0]);
    expect(shareBelow([0.7], [0])).toEqual([0]);
  });

  it('agrees with counting pair by pair on random scores with ties', () => {
    const rng = createRng(7);
    const scores = Float32Array.from({ length: 500 }, () => Math.round(rng.next() * 50) / 50);
    const hits = [0, 3, 17, 250, 499];
    const got = shareBelow(scores, hits, 3);
    hits.forEach((h, k) => {
      let below = 0;
      for (let j = 0; j < scores.length; j++) if (j !== 3 && j !== h && scores[j] < scores[h]) below++;
      expect(got[k]).toBeCloseTo(below / (scores.length - 2), 12);
    });
  });

  it('reads in plain words, with a decimal where the best results would otherwise all say 99', () => {
    expect(standingWords(0.974)).toBe('closer than 97 % of the library');
    expect(standingWords(0.9963)).toBe('closer than 99.6 % of the library');
    expect(standingWords(1)).toBe('closer than 100 % of the library');
    expect(standingWords(0)).toBe('closer than 0 % of the library');
  });
});
