// Evaluation orders through the library as the search does: with the part sizes given, pairs take the size prior
// (size-prior.ts) before the hub correction and the graph; checked against the same leave-one-out written out
// from its pieces (d2Descriptors, withSizePrior, throughLibrary, evaluateRetrieval).
import { beforeAll, describe, expect, it } from 'vitest';
import { evaluateMethods } from '../../../src/core/quality/evaluate';
import { d2Descriptors } from '../../../src/core/quality/methods';
import { DEFAULT_ENCODER } from '../../../src/core/model/encoder-config';
import { DIFFUSION_DEFAULTS } from '../../../src/core/retrieval/diffusion';
import { throughLibrary } from '../../../src/core/retrieval/hubness';
import { evaluateRetrieval } from '../../../src/core/retrieval/metrics';
import { withSizePrior } from '../../../src/core/retrieval/size-prior';
import { createRng } from '../../../src/core/rng';
import { demoModelParts } from '../../meshes';
import { useBackend } from '../../tf-helpers';

beforeAll(async () => {
  await useBackend('wasm');
});

describe('evaluation with part sizes', () => {
  it('one shape at two sizes: told apart only with the sizes, and d2+diffusion is the leave-one-out written out', () => {
    const [shape] = demoModelParts(128);
    const rng = createRng(11);
    const parts = Array.from({ length: 10 }, () => ({
      points: shape.points.map((x) => x + 0.01 * rng.normal()),
      normals: shape.normals,
    }));
    const labels = parts.map((_, i) => (i % 2 ? 'large' : 'small'));
    const diagonals = parts.map((_, i) => (i % 2 ? 500 : 5) * (1 + 0.01 * i));
    const input = {
      parts,
      labels,
      points: 64,
      pose: 'principal-axes' as const,
      untrainedConfig: DEFAULT_ENCODER,
      diffusion: DIFFUSION_DEFAULTS,
    };
    // λ = 1: copies of one shape differ by their sampling alone, so a strong prior is what tells the sizes apart.
    const withSizes = evaluateMethods({ ...input, diagonals, sizeWeight: 1 }).methods;
    const without = evaluateMethods(input).methods;
    const d2 = d2Descriptors(parts, 0);
    const cosineLike = (i: number, j: number) => 1 + d2.similarity(i, j) / 2;
    const direct = evaluateRetrieval(labels, throughLibrary(10, withSizePrior(10, cosineLike, diagonals, 1)));
    expect(withSizes['d2+diffusion']?.map).toBeCloseTo(direct.map, 12);
    expect(withSizes['d2+diffusion']?.nn).toBe(1);
    expect(withSizes['untrained+diffusion']?.nn).toBe(1);
    expect(without['untrained+diffusion']!.nn).toBeLessThan(0.8);
    // Plain similarities (no "+diffusion") take no prior.
    expect(withSizes.d2).toEqual(without.d2);
    expect(() => evaluateMethods({ ...input, diagonals: diagonals.slice(1) })).toThrow(/9 sizes for 10 parts/);
  });
});
