// Retrieval embedding's shortcuts change no byte: the inference path of the EdgeConv layer (maxima without their
// winners) equals the training path, and the sign flips of one point subset share its neighbour lists (a
// reflection keeps every distance: |−a − (−b)| = |a − b| in floating point too, negation being exact in IEEE 754).
import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { embedForRetrieval, embedParts, RETRIEVAL_RESAMPLINGS } from '../../../src/core/model/embed';
import { Encoder } from '../../../src/core/model/encoder';
import { DEFAULT_ENCODER } from '../../../src/core/model/encoder-config';
import { shapeGrid } from '../../../src/core/descriptors/shape-grid';
import { posed, resampled, type ModelPart } from '../../../src/core/model/views';
import { SIGN_FLIPS } from '../../../src/core/points/pca';
import { transformPoints } from '../../../src/core/points/rotation';
import { createRng } from '../../../src/core/rng';
import { normaliseRows } from '../../../src/core/vectors';
import { guardTensorLeaks, useBackend } from '../../tf-helpers';
import { demoModelParts } from '../../meshes';

guardTensorLeaks();

let demo: ModelPart[] = [];
beforeAll(async () => {
  await useBackend('wasm');
  demo = demoModelParts(512).slice(0, 40); // more than one batch of 32
});

describe('retrieval embedding (default encoder, EdgeConv k = 32)', () => {
  it('the inference path gives the training path’s pooled features exactly', () => {
    const enc = new Encoder(DEFAULT_ENCODER, createRng(2));
    const rng = createRng(3);
    const x = Float32Array.from({ length: 3 * 64 * 6 }, () => rng.uniform(-1, 1));
    const train = tf.tidy(() => enc.pooled(tf.tensor3d(x, [3, 64, 6])).dataSync());
    const infer = tf.tidy(() => enc.pooled(tf.tensor3d(x, [3, 64, 6]), {}).dataSync());
    expect(infer).toEqual(train);
    expect(() => tf.tidy(() => enc.pooled(tf.tensor3d(x, [3, 64, 6]), { neighbours: new Int32Array(5) }))).toThrow(
      /5 neighbour entries for 3 × 64 points, k = 32/,
    );
    enc.dispose();
  });

  it('equals its definition byte for byte: every subset and sign flip embedded on its own, summed, renormalised', () => {
    const enc = new Encoder({ ...DEFAULT_ENCODER, surfaceGrid: null }, createRng(7));
    const n = 128;
    const got = embedForRetrieval(enc, demo, n, 'principal-axes');
    const ready = posed(demo, 'principal-axes');
    let sum: Float32Array | null = null;
    for (let r = 0; r < RETRIEVAL_RESAMPLINGS; r++)
      for (const flip of SIGN_FLIPS) {
        const turned = ready.map((p) => {
          const s = resampled(p, r, n);
          return { ...s, points: transformPoints(flip, s.points), normals: transformPoints(flip, s.normals) };
        });
        const e = embedParts(enc, turned, n); // no shared neighbour lists
        if (!sum) sum = e;
        else for (let i = 0; i < e.length; i++) sum[i] += e[i];
      }
    expect(got).toEqual(normaliseRows(sum!, sum!.length / demo.length));
    enc.dispose();
  });

  // The fused row's cosine is the weighted mean of the two cosines: (√(1−s)a, √s b)·(√(1−s)a', √s b') = (1−s) a·a' + s b·b'.
  it('sets the surface grid beside the learned rows with its share of every cosine', () => {
    const share = 0.4;
    const plain = new Encoder({ ...DEFAULT_ENCODER, surfaceGrid: null }, createRng(7));
    const withGrid = new Encoder({ ...DEFAULT_ENCODER, surfaceGrid: { cells: 8, share } }, createRng(7));
    const parts = demo.slice(0, 6);
    const learned = embedForRetrieval(plain, parts, 128, 'principal-axes');
    const got = embedForRetrieval(withGrid, parts, 128, 'principal-axes');
    const grids = posed(parts, 'principal-axes').map((p) =>
      shapeGrid(p.points, p.normals, { cells: 8, facing: true, signFree: true }),
    );
    const dl = learned.length / parts.length,
      D = got.length / parts.length;
    expect(D).toBe(dl + grids[0].length);
    const dot = (a: ArrayLike<number>, ao: number, b: ArrayLike<number>, bo: number, len: number) => {
      let s = 0;
      for (let d = 0; d < len; d++) s += a[ao + d] * b[bo + d];
      return s;
    };
    for (let i = 0; i < parts.length; i++) {
      expect(dot(got, i * D, got, i * D, D)).toBeCloseTo(1, 5);
      for (let j = 0; j < parts.length; j++) {
        const want =
          (1 - share) * dot(learned, i * dl, learned, j * dl, dl) +
          share * dot(grids[i], 0, grids[j], 0, grids[i].length);
        expect(dot(got, i * D, got, j * D, D)).toBeCloseTo(want, 5);
      }
    }
    plain.dispose();
    withGrid.dispose();
  });
});
