// Retrieval embedding's shortcuts change no byte: the inference path (maxima without their winners, the pooling as
// the backend's max-pool, the last layer read in place) equals the training path, and the sign flips of one point
// subset share its neighbour lists (a reflection keeps every distance: |−a − (−b)| = |a − b| in floating point too,
// negation being exact in IEEE 754). Both poses share the lists found in the files' coordinates: a turn keeps
// distances only up to rounding, so the definition below is checked with lists found in each view's own coordinates
// and holds on these parts, and a pair's principal block is checked to be the principal encoder alone, exactly.
import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { embedForRetrieval, embedParts, embedShared, RETRIEVAL_RESAMPLINGS } from '../../../src/core/model/embed';
import { Encoder } from '../../../src/core/model/encoder';
import { DEFAULT_ENCODER, type EncoderConfig } from '../../../src/core/model/encoder-config';
import { readFloats } from '../../../src/core/model/backend';
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

  it('pools the same bits in inference with a mean term and without the EdgeConv layer', () => {
    // PointNet's symmetric pooling (Qi et al. 2017, eq. 1): max over the points, channel by channel (and here the mean).
    const rng = createRng(4);
    const x = Float32Array.from({ length: 3 * 50 * 6 }, () => rng.uniform(-1, 1));
    const configs: EncoderConfig[] = [
      { ...DEFAULT_ENCODER, pooling: 'max+mean' },
      { ...DEFAULT_ENCODER, edge: null },
      { ...DEFAULT_ENCODER, edge: null, pooling: 'max+mean' },
    ];
    for (const config of configs) {
      const enc = new Encoder(config, createRng(5));
      const train = tf.tidy(() => enc.pooled(tf.tensor3d(x, [3, 50, 6])).dataSync());
      const infer = tf.tidy(() => enc.pooled(tf.tensor3d(x, [3, 50, 6]), {}).dataSync());
      expect(infer).toEqual(train);
      // The max by hand from the last layer's per-point output: the definition.
      const h = tf.tidy(() => {
        const flat = enc.edge ? enc.edgeOutput(tf.tensor3d(x, [3, 50, 6])) : tf.tensor2d(x, [150, 6]);
        let a: tf.Tensor2D = flat;
        for (const l of enc.layers) a = tf.relu(tf.add(tf.matMul(a, l.w), l.b)) as tf.Tensor2D;
        return a;
      });
      const v = h.dataSync(),
        C = h.shape[1];
      const width = config.pooling === 'max' ? C : 2 * C;
      for (let b = 0; b < 3; b++)
        for (let c = 0; c < C; c += 37) {
          let best = -Infinity;
          for (let p = 0; p < 50; p++) best = Math.max(best, v[(b * 50 + p) * C + c]);
          expect(infer[b * width + c]).toBeCloseTo(best, 5);
        }
      h.dispose();
      enc.dispose();
    }
  });

  it('reads a tensor in place with the values dataSync copies out', () => {
    const t = tf.randomNormal([64, 33], 0, 1, 'float32', 9);
    const view = readFloats(t);
    expect(view).toEqual(t.dataSync());
    const part = tf.slice(t, [1, 0], [2, 33]);
    expect(readFloats(part)).toEqual(t.dataSync().slice(33, 99));
    tf.dispose([t, part]);
  });

  it('embeds the principal block of a pair exactly as the principal encoder alone (the same shared lists)', () => {
    const a = new Encoder({ ...DEFAULT_ENCODER, surfaceGrid: null }, createRng(7)),
      b = new Encoder({ ...DEFAULT_ENCODER, surfaceGrid: null }, createRng(8));
    const parts = demo.slice(0, 34);
    const both = embedForRetrieval([a, b], parts, 128, 'file-and-principal');
    const alone = embedForRetrieval(b, parts, 128, 'principal-axes');
    const D = alone.length / parts.length,
      scale = 1 / Math.sqrt(2); // sideBySide's factor for two blocks
    for (let i = 0; i < parts.length; i++)
      expect(Array.from(both.subarray(i * 2 * D + D, (i + 1) * 2 * D))).toEqual(
        Array.from(alone.subarray(i * D, (i + 1) * D), (v) => Math.fround(v * scale)),
      );
    a.dispose();
    b.dispose();
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

  it('shared with a second thread, gives the bytes of one thread: whole batches go there, the rest is embedded here', async () => {
    const enc = new Encoder({ ...DEFAULT_ENCODER, surfaceGrid: null }, createRng(9));
    const parts = demo.slice(0, 40); // batches of 32 and 8
    const alone = embedForRetrieval(enc, parts, 128, 'principal-axes');
    const asked: number[] = [];
    const here: number[] = [];
    const local = (ps: readonly ModelPart[]) => {
      here.push(ps.length);
      return embedForRetrieval(enc, ps, 128, 'principal-axes');
    };
    const remote = async (ps: readonly ModelPart[]) => {
      asked.push(ps.length);
      return embedForRetrieval(enc, ps, 128, 'principal-axes');
    };
    expect(Array.from(await embedShared(parts, local, remote))).toEqual(Array.from(alone));
    expect([asked, here]).toEqual([[32], [8]]); // two batches: one each
    expect(Array.from(await embedShared(parts, local, remote, 1))).toEqual(Array.from(alone));
    expect(Array.from(await embedShared(parts.slice(0, 20), local, remote))).toEqual(
      Array.from(alone.subarray(0, (20 * alone.length) / 40)),
    );
    expect([asked, here]).toEqual([[32, 40, 20], [8]]); // all there; one batch rounds to there
    // A failure on either side is the call's failure, and the other side's answer is still awaited.
    await expect(embedShared(parts, local, () => Promise.reject(new Error('worker gone')))).rejects.toThrow(
      'worker gone',
    );
    let settled = false;
    const slow = () =>
      new Promise<Float32Array>((resolve) => setTimeout(() => resolve(new Float32Array(0)), 20)).finally(
        () => (settled = true),
      );
    const broken = () => {
      throw new Error('no memory');
    };
    await expect(embedShared(parts, broken, slow)).rejects.toThrow('no memory');
    expect(settled).toBe(true);
    enc.dispose();
  });
});
