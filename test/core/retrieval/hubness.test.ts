// Hub correction (CSLS, Conneau, Lample, Ranzato, Denoyer & Jégou 2018, "Word translation without parallel data",
// eq. 6: CSLS(x, y) = 2·cos(x, y) − r(x) − r(y), r the mean cosine to the k nearest neighbours), checked on worked
// examples computed by hand below.
import { describe, expect, it } from 'vitest';
import { hubCorrected, meanOfTop, neighbourhoodMeans } from '../../../src/core/retrieval/hubness';
import { EmbeddingIndex } from '../../../src/core/retrieval/index';
import { expectClose } from '../../helpers';

const rad = (d: number) => (d * Math.PI) / 180;

describe('CSLS (Conneau et al. 2018, eq. 6)', () => {
  it('four unit vectors at 0°, 10°, 20° and 90°, k = 1: r is the cosine to the nearest other vector', () => {
    const deg = [0, 10, 20, 90];
    const cos = (i: number, j: number) => Math.cos(rad(deg[i] - deg[j]));
    const r = neighbourhoodMeans(4, cos, 1);
    // r(0°) = r(10°) = r(20°) = cos 10° = 0.984808; r(90°) = cos 70° = 0.342020.
    expectClose(r, [0.984808, 0.984808, 0.984808, 0.34202], { atol: 1e-6 });
    const csls = hubCorrected(4, cos, 1);
    // 0° and 20°: 2·cos 20° − 2·cos 10° = 2·(0.939693 − 0.984808) = −0.090230.
    expectClose(csls(0, 2), -0.09023, { atol: 1e-6 });
    // 0° and 90°: 2·0 − cos 10° − cos 70° = −1.326828.
    expectClose(csls(0, 3), -1.326828, { atol: 1e-6 });
    expect(csls(2, 0)).toBe(csls(0, 2));
  });

  it('demotes a hub: part 1 is nearest the hub by similarity, but nearest part 2 once each is scaled by its neighbourhood (k = 2)', () => {
    // Part 0 is close to everything (0.8 to part 1, 0.5 to part 2, 0.9 to parts 3–5); parts 1 and 2 are 0.75
    // apart; every other pair is 0.1. r(0) = (0.9 + 0.9)/2 = 0.9, r(1) = (0.8 + 0.75)/2 = 0.775,
    // r(2) = (0.75 + 0.5)/2 = 0.625. CSLS(1, 0) = 1.6 − 0.775 − 0.9 = −0.075; CSLS(1, 2) = 1.5 − 0.775 − 0.625 = 0.1.
    const S = Array.from({ length: 6 }, () => new Array(6).fill(0.1));
    const set = (i: number, j: number, v: number) => {
      S[i][j] = v;
      S[j][i] = v;
    };
    set(0, 1, 0.8);
    set(0, 2, 0.5);
    set(0, 3, 0.9);
    set(0, 4, 0.9);
    set(0, 5, 0.9);
    set(1, 2, 0.75);
    const sim = (i: number, j: number) => S[i][j];
    const r = neighbourhoodMeans(6, sim, 2);
    expectClose([r[0], r[1], r[2]], [0.9, 0.775, 0.625], { atol: 1e-12 });
    const csls = hubCorrected(6, sim, 2);
    expectClose(csls(1, 0), -0.075, { atol: 1e-12 });
    expectClose(csls(1, 2), 0.1, { atol: 1e-12 });
    const nearest = (f: (i: number, j: number) => number) => [0, 2, 3, 4, 5].sort((a, b) => f(1, b) - f(1, a))[0];
    expect(nearest(sim)).toBe(0);
    expect(nearest(csls)).toBe(2);
  });

  it('caps k at the parts there are, and leaves out what is filtered', () => {
    expect(meanOfTop([0.2, 0.8, NaN, 0.5], 30)).toBeCloseTo(0.5, 12); // three values, NaN never counted
    expect(meanOfTop([0.2, 0.8, 0.5], 2, (j) => j !== 1)).toBeCloseTo(0.35, 12);
    expect(meanOfTop([], 3)).toBe(0);
    expect(() => neighbourhoodMeans(3, () => 0, 0)).toThrow(/k must be a whole number ≥ 1/);
  });

  it('the index scores a query as 2·cos − r(q) − r(j), with r(q) leaving the query part out when it is in the library', () => {
    const deg = [0, 10, 20, 90, 100];
    const flat = Float32Array.from(deg.flatMap((d) => [Math.cos(rad(d)), Math.sin(rad(d))]));
    const index = new EmbeddingIndex(
      flat,
      2,
      deg.map((d) => ({ name: `${d}°`, label: 'x', diagonal: 1 })),
    );
    const cos = (i: number, j: number) => Math.cos(rad(deg[i] - deg[j]));
    const r = neighbourhoodMeans(5, cos); // k = 30 > 4 others: the mean over all other parts
    expectClose(index.neighbourhoodMeans(), r, { atol: 1e-6 });
    expectClose(r[0], (Math.cos(rad(10)) + Math.cos(rad(20)) + Math.cos(rad(90)) + Math.cos(rad(100))) / 4, {
      atol: 1e-12,
    });
    const fromPart = index.hubCorrected(index.scores(index.vector(1)), 1);
    deg.forEach((_, j) => expectClose(fromPart[j], 2 * cos(1, j) - r[1] - r[j], { atol: 1e-6 }));
    const q = [Math.cos(rad(5)), Math.sin(rad(5))];
    const qc = deg.map((d) => Math.cos(rad(d - 5)));
    const rq = qc.reduce((a, b) => a + b, 0) / 5;
    const outside = index.hubCorrected(index.scores(q));
    deg.forEach((_, j) => expectClose(outside[j], 2 * qc[j] - rq - r[j], { atol: 1e-6 }));
  });
});
