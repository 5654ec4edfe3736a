import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { Encoder } from '../../../src/core/model/encoder';
import { DEFAULT_ENCODER, type EncoderConfig } from '../../../src/core/model/encoder-config';
import { explainMatch } from '../../../src/core/model/explain';
import { setWeights } from '../../../src/core/model/trainer';
import { createRng } from '../../../src/core/rng';
import { expectClose } from '../../helpers';
import { demoModelParts } from '../../meshes';
import { guardTensorLeaks, useBackend } from '../../tf-helpers';

guardTensorLeaks();
beforeAll(async () => {
  await useBackend('wasm');
});

const part = (pts: number[][]) => ({
  points: Float32Array.from(pts.flat()),
  normals: new Float32Array(pts.length * 3),
});

describe('why a match: points weighted by the channels they win (PointNet critical points, Qi et al. 2017)', () => {
  it('a worked example by hand: one identity layer, so each channel is a coordinate and its winner the point furthest along it', () => {
    const config: EncoderConfig = {
      inputFeatures: 'xyz',
      widths: [3],
      pooling: 'max',
      projection: [2],
      retrieval: 'pooled',
    };
    const enc = new Encoder(config, createRng(1));
    setWeights(enc, [
      Float32Array.from([1, 0, 0, 0, 1, 0, 0, 0, 1]),
      new Float32Array(3),
      new Float32Array(6),
      new Float32Array(2),
    ]);
    // a: pooled (1, 2, 3), won by points 0, 1, 2; point 3 wins nothing.
    const a = part([
      [1, 0, 0],
      [0, 2, 0],
      [0, 0, 3],
      [0.5, 0.5, 0.5],
    ]);
    // b: pooled (2, 1, 1), x won by point 1, y by point 2, z by point 0 (its fourth point repeats point 0: ties go to the first).
    const b = part([
      [0, 0, 1],
      [2, 0, 0],
      [0, 1, 0],
    ]);
    const e = explainMatch(enc, a, b, 4, 'as-is');
    // â = (1, 2, 3)/√14, b̂ = (2, 1, 1)/√6: shares x 2/√84, y 2/√84, z 3/√84; cosine 7/√84.
    const r = Math.sqrt(84);
    expectClose(Array.from(e.a), [2 / r, 2 / r, 3 / r, 0], { atol: 1e-6 });
    expectClose(Array.from(e.b), [3 / r, 2 / r, 2 / r, 0], { atol: 1e-6 });
    expectClose(e.pooledCosine, 7 / r, { atol: 1e-6 });
    enc.dispose();
  });
  it('with the default encoder (EdgeConv first), the contributions add up to the cosine of the pooled features the fused op computes', () => {
    const enc = new Encoder(DEFAULT_ENCODER, createRng(3));
    const [a, b] = demoModelParts(256).slice(0, 2);
    const n = 256;
    const e = explainMatch(enc, a, b, n, 'as-is');
    const pooled = tf.tidy(() => {
      const x = new Float32Array(2 * n * 6);
      [a, b].forEach((p, s) => {
        for (let i = 0; i < n; i++) {
          x.set(p.points.subarray(3 * i, 3 * i + 3), (s * n + i) * 6);
          x.set(p.normals.subarray(3 * i, 3 * i + 3), (s * n + i) * 6 + 3);
        }
      });
      return enc.pooled(tf.tensor3d(x, [2, n, 6])).arraySync() as number[][];
    });
    const norm = (v: number[]) => Math.hypot(...v);
    const cos = pooled[0].reduce((s, v, c) => s + v * pooled[1][c], 0) / (norm(pooled[0]) * norm(pooled[1]));
    expectClose(e.pooledCosine, cos, { atol: 1e-5 });
    expectClose(
      e.a.reduce((s, v) => s + v, 0),
      cos,
      { atol: 1e-5 },
    );
    expectClose(
      e.b.reduce((s, v) => s + v, 0),
      cos,
      { atol: 1e-5 },
    );
    // Only critical points carry weight: at most one per channel.
    expect(e.a.filter((v) => v > 0).length).toBeLessThanOrEqual(256);
    expect(e.a.filter((v) => v > 0).length).toBeGreaterThan(10);
    enc.dispose();
  });
});
