import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { edgeFeatures, neighbourIndex } from '../../../src/core/points/neighbours';
import { Encoder } from '../../../src/core/model/encoder';
import { type EncoderConfig } from '../../../src/core/model/encoder-config';
import { PointIndex } from '../../../src/core/points/kdtree';
import { embedParts } from '../../../src/core/model/embed';
import { fillSlot } from '../../../src/core/model/views';
import { axisAngle, transformPoints } from '../../../src/core/points/rotation';
import { createRng } from '../../../src/core/rng';
import { expectClose } from '../../helpers';
import { expectNoLeak, useBackend, guardTensorLeaks } from '../../tf-helpers';

guardTensorLeaks();

beforeAll(async () => {
  await useBackend('wasm');
});

const tiny: EncoderConfig = { inputFeatures: 'xyz', widths: [8, 16, 12], pooling: 'max', projection: [10, 6] };

function cloudBatch(B: number, N: number, seed: number, F = 3): Float32Array {
  const rng = createRng(seed);
  return Float32Array.from({ length: B * N * F }, () => rng.uniform(-1, 1));
}

/** The same network written with plain tfjs ops, differentiated by tfjs autodiff: the reference. */
function naivePooled(enc: Encoder, x: tf.Tensor3D): tf.Tensor2D {
  const [B, N, F] = x.shape;
  let h: tf.Tensor2D = tf.reshape(x, [B * N, F]);
  for (const l of enc.layers) h = tf.relu(tf.add(tf.matMul(h, l.w), l.b)) as tf.Tensor2D;
  const h3 = tf.reshape(h, [B, N, -1]);
  return enc.config.pooling === 'max'
    ? (tf.max(h3, 1) as tf.Tensor2D)
    : tf.concat([tf.max(h3, 1) as tf.Tensor2D, tf.mean(h3, 1) as tf.Tensor2D], 1);
}

describe('fused per-point MLP + pooling: hand-written gradients equal tfjs autodiff of the plain formulation', () => {
  it.each(['max', 'max+mean'] as const)('pooling %s', async (pooling) => {
    const enc = new Encoder({ ...tiny, pooling }, createRng(1));
    await expectNoLeak(() => {
      const x = tf.tensor3d(cloudBatch(3, 20, 2), [3, 20, 3]);
      const target = tf.randomNormal([3, pooling === 'max' ? 12 : 24], 0, 1, 'float32', 3);
      const objective = (f: () => tf.Tensor2D) => () => tf.sum(tf.mul(f(), target)) as tf.Scalar;
      const pointVars = enc.layers.flatMap((l) => [l.w, l.b]);
      const fast = tf.variableGrads(
        objective(() => enc.pooled(x)),
        pointVars,
      );
      const slow = tf.variableGrads(
        objective(() => naivePooled(enc, x)),
        pointVars,
      );
      expectClose(fast.value.dataSync(), slow.value.dataSync(), { rtol: 1e-5, atol: 1e-5 });
      for (const v of pointVars)
        expectClose(fast.grads[v.name].dataSync(), slow.grads[v.name].dataSync(), { rtol: 1e-4, atol: 1e-5 });
      tf.dispose([x, target, fast.value, slow.value, ...Object.values(fast.grads), ...Object.values(slow.grads)]);
    });
    enc.dispose();
  });
  it('matches central finite differences on a tiny model (first-layer weights)', () => {
    const enc = new Encoder(tiny, createRng(4));
    const x = tf.tensor3d(cloudBatch(2, 10, 5), [2, 10, 3]);
    const target = tf.randomNormal([2, 12], 0, 1, 'float32', 6);
    const f = () => tf.sum(tf.mul(enc.pooled(x), target)) as tf.Scalar;
    const { grads, value } = tf.variableGrads(f, [enc.layers[0].w]);
    const analytic = grads[enc.layers[0].w.name].dataSync();
    const w0 = enc.layers[0].w.dataSync().slice();
    const h = 1e-3;
    const numeric = Array.from({ length: 6 }, (_, i) => {
      const at = (d: number) => {
        const w = w0.slice();
        w[i] += d;
        tf.tidy(() => enc.layers[0].w.assign(tf.tensor2d(w, [3, 8])));
        return tf.tidy(() => f().dataSync()[0]);
      };
      const g = (at(h) - at(-h)) / (2 * h);
      tf.tidy(() => enc.layers[0].w.assign(tf.tensor2d(w0, [3, 8])));
      return g;
    });
    // Max pooling is piecewise linear: a step this small rarely changes a winning point, so agreement is close.
    expectClose(Array.from(analytic.slice(0, 6)), numeric, { atol: 2e-3, rtol: 2e-2 });
    tf.dispose([x, target, value, ...Object.values(grads)]);
    enc.dispose();
    enc.dispose();
  });
});

describe('symmetries of the architecture', () => {
  it('shuffling the points gives the same embedding (within 1e-5)', () => {
    const enc = new Encoder({ ...tiny, pooling: 'max+mean' }, createRng(7));
    const pts = cloudBatch(1, 64, 8);
    const rng = createRng(9);
    const order = Array.from({ length: 64 }, (_, i) => i);
    for (let i = 63; i > 0; i--) {
      const j = rng.int(i + 1);
      [order[i], order[j]] = [order[j], order[i]];
    }
    const shuffled = new Float32Array(pts.length);
    order.forEach((src, dst) => shuffled.set(pts.subarray(src * 3, src * 3 + 3), dst * 3));
    const e1 = tf.tidy(() => enc.embed(tf.tensor3d(pts, [1, 64, 3])).dataSync());
    const e2 = tf.tidy(() => enc.embed(tf.tensor3d(shuffled, [1, 64, 3])).dataSync());
    expectClose(e2, e1, { atol: 1e-5 });
    enc.dispose();
  });
  it('rotating the input changes the embedding (not rotation-invariant by accident)', () => {
    const enc = new Encoder(tiny, createRng(10));
    const pts = cloudBatch(1, 64, 11);
    const turned = transformPoints(axisAngle([0, 0, 1], 1.1), pts);
    const e1 = tf.tidy(() => enc.embed(tf.tensor3d(pts, [1, 64, 3])).dataSync());
    const e2 = tf.tidy(() => enc.embed(tf.tensor3d(turned, [1, 64, 3])).dataSync());
    let cos = 0;
    for (let i = 0; i < e1.length; i++) cos += e1[i] * e2[i];
    expect(cos).toBeLessThan(0.999);
    enc.dispose();
  });
  it('embeddings are unit length; wrong channel counts are refused', () => {
    const enc = new Encoder(tiny, createRng(12));
    const e = tf.tidy(() => enc.embed(tf.tensor3d(cloudBatch(2, 16, 13), [2, 16, 3])).dataSync());
    expectClose(Math.hypot(...e.slice(0, 12)), 1, { atol: 1e-5 });
    expect(() => tf.tidy(() => enc.pooled(tf.zeros([1, 4, 6]) as tf.Tensor3D))).toThrow(
      /6 channels per point, expected 3/,
    );
    expect(() => new Encoder({ ...tiny, widths: [] }, createRng(1))).toThrow(/widths/);
    enc.dispose();
  });
  it('the same seed builds the same weights', () => {
    const a = new Encoder(tiny, createRng(5)),
      b = new Encoder(tiny, createRng(5));
    expect(Array.from(a.layers[1].w.dataSync())).toEqual(Array.from(b.layers[1].w.dataSync()));
    a.dispose();
    b.dispose();
  });
});

describe('unsigned-normal inputs', () => {
  it('write the six entries of n nᵀ (off-diagonals × √2), the same for n and −n, with unit length', () => {
    // Reference: for a unit vector, ‖n nᵀ‖_F = ‖n‖² = 1, and the Frobenius norm of a symmetric 3×3 matrix is
    // the length of (a11, a22, a33, √2·a12, √2·a23, √2·a31) (the usual symmetric-matrix vectorisation).
    const n = [0.36, -0.48, 0.8]; // unit: 0.1296 + 0.2304 + 0.64 = 1
    const points = Float32Array.from([0.1, 0.2, 0.3]);
    const a = new Float32Array(9),
      b = new Float32Array(9);
    fillSlot(a, 0, 1, 'xyz+unsigned-normal', points, Float32Array.from(n));
    fillSlot(b, 0, 1, 'xyz+unsigned-normal', points, Float32Array.from(n.map((v) => -v)));
    expect([...a]).toEqual([...b]);
    expectClose([...a.slice(0, 3)], [0.1, 0.2, 0.3], { atol: 1e-7 });
    expectClose(
      [...a.slice(3)],
      [0.1296, 0.2304, 0.64, Math.SQRT2 * 0.36 * -0.48, Math.SQRT2 * -0.48 * 0.8, Math.SQRT2 * 0.8 * 0.36],
      { atol: 1e-6 },
    );
    expect(Math.hypot(...a.slice(3))).toBeCloseTo(1, 6);
  });

  it('an encoder on them takes nine channels and gives the same embedding when every normal is flipped', () => {
    const enc = new Encoder({ ...tiny, inputFeatures: 'xyz+unsigned-normal' }, createRng(5));
    const rng = createRng(6);
    const points = Float32Array.from({ length: 64 * 3 }, () => rng.uniform(-1, 1));
    const normals = Float32Array.from({ length: 64 * 3 }, () => rng.uniform(-1, 1));
    const flipped = normals.map((v) => -v);
    const [e1, e2] = [normals, flipped].map((nrm) => embedParts(enc, [{ points, normals: nrm }], 64));
    expectClose([...e1], [...e2], { atol: 1e-6 });
    expect(() => tf.tidy(() => enc.embed(tf.zeros([1, 8, 6]) as tf.Tensor3D))).toThrow(/9/);
    enc.dispose();
  });
});

describe('what retrieval compares', () => {
  it('is the normalised projection-head output by default, or the pooled features when asked', () => {
    const x = tf.tensor3d(cloudBatch(3, 32, 21), [3, 32, 3]);
    for (const retrieval of ['projection', 'pooled'] as const) {
      const enc = new Encoder({ ...tiny, retrieval }, createRng(9));
      const got = tf.tidy(() => enc.embed(x).arraySync()) as number[][];
      // Reference written with plain tfjs ops: x / ‖x‖ per row of the chosen output.
      const want = tf.tidy(() => {
        const pooled = enc.pooled(x);
        const out = retrieval === 'projection' ? enc.project(pooled) : pooled;
        return tf.div(out, tf.norm(out, 'euclidean', 1, true)).arraySync();
      }) as number[][];
      expect(got[0].length).toBe(
        retrieval === 'projection' ? tiny.projection[tiny.projection.length - 1] : tiny.widths[tiny.widths.length - 1],
      );
      expectClose(got.flat(), want.flat(), { atol: 1e-6 });
      enc.dispose();
    }
    x.dispose();
  });
});

describe('EdgeConv first layer (Wang et al. 2019, eq. 8, on the input points)', () => {
  it('edge inputs are [x_i, x_j − x_i] over the k nearest points, the same set kd-tree-javascript finds', () => {
    const B = 2,
      N = 40,
      k = 6;
    const x = cloudBatch(B, N, 11);
    const e = edgeFeatures(x, B, N, 3, k);
    for (let b = 0; b < B; b++) {
      const cloud = x.slice(b * N * 3, (b + 1) * N * 3);
      const index = new PointIndex(cloud);
      for (const i of [0, 17, 39]) {
        const ref = index
          .nearest(cloud[3 * i], cloud[3 * i + 1], cloud[3 * i + 2], k)
          .map((n) => n.index)
          .sort((p, q) => p - q);
        const got: number[] = [];
        for (let m = 0; m < k; m++) {
          const o = ((b * N + i) * k + m) * 6;
          expect([e[o], e[o + 1], e[o + 2]]).toEqual([cloud[3 * i], cloud[3 * i + 1], cloud[3 * i + 2]]);
          // Recover j from x_j = x_i + (x_j − x_i).
          const j = ref.find(
            (c) =>
              Math.abs(cloud[3 * c] - (e[o] + e[o + 3])) < 1e-6 &&
              Math.abs(cloud[3 * c + 1] - (e[o + 1] + e[o + 4])) < 1e-6,
          );
          expect(j).toBeDefined();
          got.push(j!);
        }
        expect(got[0]).toBe(i); // the point itself first
        expect([...got].sort((p, q) => p - q)).toEqual(ref);
      }
    }
  });
  it.each([
    ['xyz', 3],
    ['xyz+normal', 6],
  ] as const)(
    'the split layer relu(A_i + max_j C_j) and its gradients equal tfjs autodiff of max_j relu(e_ij·W + b) (%s inputs)',
    async (inputFeatures, F) => {
      const cfg: EncoderConfig = { ...tiny, inputFeatures, edge: { k: 5, width: 7 } };
      const enc = new Encoder(cfg, createRng(12));
      expect(enc.weightNames.slice(0, 2)).toEqual(['edge/w', 'edge/b']);
      await expectNoLeak(() => {
        const B = 2,
          N = 15;
        const data = cloudBatch(B, N, 13, F);
        const x = tf.tensor3d(data, [B, N, F]);
        const edges = tf.tensor2d(edgeFeatures(data, B, N, F, 5), [B * N * 5, F + 3]);
        const target = tf.randomNormal([B, 12], 0, 1, 'float32', 14);
        const naive = () => {
          const h = tf.max(
            tf.reshape(tf.relu(tf.add(tf.matMul(edges, enc.edge!.w), enc.edge!.b)), [B * N, 5, 7]),
            1,
          ) as tf.Tensor2D;
          let g: tf.Tensor2D = h;
          for (const l of enc.layers) g = tf.relu(tf.add(tf.matMul(g, l.w), l.b)) as tf.Tensor2D;
          return tf.max(tf.reshape(g, [B, N, -1]), 1) as tf.Tensor2D;
        };
        const objective = (f: () => tf.Tensor2D) => () => tf.sum(tf.mul(f(), target)) as tf.Scalar;
        const vars = [enc.edge!.w, enc.edge!.b, ...enc.layers.flatMap((l) => [l.w, l.b])];
        const fast = tf.variableGrads(
          objective(() => enc.pooled(x)),
          vars,
        );
        const slow = tf.variableGrads(objective(naive), vars);
        expectClose(fast.value.dataSync(), slow.value.dataSync(), { rtol: 1e-5, atol: 1e-5 });
        for (const v of vars)
          expectClose(fast.grads[v.name].dataSync(), slow.grads[v.name].dataSync(), { rtol: 1e-4, atol: 1e-5 });
        tf.dispose([
          x,
          edges,
          target,
          fast.value,
          slow.value,
          ...Object.values(fast.grads),
          ...Object.values(slow.grads),
        ]);
      });
      enc.dispose();
    },
  );
  it('gives a repeated point (dropout refills by repeating) the gradient once, as the autodiff reference does', () => {
    const enc = new Encoder({ ...tiny, edge: { k: 4, width: 5 } }, createRng(21));
    const data = cloudBatch(1, 12, 22);
    data.copyWithin(3, 0, 3); // point 1 = point 0: equal C rows tie in every channel
    const x = tf.tensor3d(data, [1, 12, 3]);
    const edges = tf.tensor2d(edgeFeatures(data, 1, 12, 3, 4), [12 * 4, 6]);
    const vars = [enc.edge!.w, enc.edge!.b];
    // Reference: tfjs autodiff of the max written as Σ_m z_m·[m = first argmax] (tfjs's own Max gradient would
    // credit every tied edge in full, which sums to twice the derivative of the function).
    const slow = tf.variableGrads(() => {
      const z = tf.reshape(tf.relu(tf.add(tf.matMul(edges, enc.edge!.w), enc.edge!.b)), [12, 4, 5]);
      const first = tf.transpose(tf.oneHot(tf.argMax(z, 1), 4), [0, 2, 1]); // (12, 4, 5): 1 at the first winning edge
      return tf.sum(tf.mul(z, first)) as tf.Scalar;
    }, vars);
    const fast = tf.variableGrads(() => tf.sum(enc.edgeOutput(x)) as tf.Scalar, vars);
    expectClose(fast.value.dataSync(), slow.value.dataSync(), { rtol: 1e-5 });
    for (const v of vars)
      expectClose(fast.grads[v.name].dataSync(), slow.grads[v.name].dataSync(), { rtol: 1e-4, atol: 1e-5 });
    // The case has real ties: tfjs's Max gradient (every tie credited) gives a larger bias gradient.
    const tied = tf.variableGrads(
      () =>
        tf.sum(
          tf.max(tf.reshape(tf.relu(tf.add(tf.matMul(edges, enc.edge!.w), enc.edge!.b)), [12, 4, 5]), 1),
        ) as tf.Scalar,
      vars,
    );
    const biasSum = (g: tf.NamedTensorMap) => tf.tidy(() => tf.sum(g[enc.edge!.b.name]).dataSync()[0]);
    expect(biasSum(tied.grads)).toBeGreaterThan(biasSum(fast.grads) + 0.5);
    tf.dispose([
      x,
      edges,
      slow.value,
      fast.value,
      tied.value,
      ...Object.values(slow.grads),
      ...Object.values(fast.grads),
      ...Object.values(tied.grads),
    ]);
    enc.dispose();
  });
  it('neighbour lists are the first k of a full sort by (squared distance, index), the point itself first, repeated points included', () => {
    // The definition, by Array.prototype.sort (stable, ECMAScript 2019) over all points: the selection must give the
    // same rows in the same order, since the order decides which of tied neighbours wins a max.
    const B = 3,
      N = 48;
    const x = cloudBatch(B, N, 43);
    for (let i = 0; i < 10; i++) x.copyWithin(3 * (2 * i + 1), 3 * (2 * i), 3 * (2 * i) + 3); // ten repeated pairs in cloud 0
    x.copyWithin(3 * (N + 5), 3 * (N + 4), 3 * (N + 5)); // and one in cloud 1
    for (const k of [1, 2, 7, 16, 33, N]) {
      const got = neighbourIndex(x, B, N, 3, k);
      for (let b = 0; b < B; b++)
        for (let i = 0; i < N; i++) {
          const d = (j: number) =>
            (x[(b * N + j) * 3] - x[(b * N + i) * 3]) ** 2 +
            (x[(b * N + j) * 3 + 1] - x[(b * N + i) * 3 + 1]) ** 2 +
            (x[(b * N + j) * 3 + 2] - x[(b * N + i) * 3 + 2]) ** 2;
          const others = Array.from({ length: N }, (_, j) => j)
            .filter((j) => j !== i)
            .sort((p, q) => d(p) - d(q) || p - q);
          const ref = [i, ...others].slice(0, k).map((j) => b * N + j);
          expect(Array.from(got.subarray((b * N + i) * k, (b * N + i + 1) * k))).toEqual(ref);
        }
    }
  });
  it('keeps the embedding the same when the points are shuffled, and refuses a bad k', () => {
    const cfg: EncoderConfig = { ...tiny, edge: { k: 4, width: 8 } };
    const enc = new Encoder(cfg, createRng(15));
    const data = cloudBatch(1, 30, 16);
    const perm = Array.from({ length: 30 }, (_, i) => (i * 7) % 30);
    const shuffled = Float32Array.from(perm.flatMap((p) => [data[3 * p], data[3 * p + 1], data[3 * p + 2]]));
    const a = tf.tidy(() => enc.embed(tf.tensor3d(data, [1, 30, 3])).dataSync());
    const b = tf.tidy(() => enc.embed(tf.tensor3d(shuffled, [1, 30, 3])).dataSync());
    expectClose(b, a, { atol: 1e-5 });
    enc.dispose();
    expect(() => new Encoder({ ...tiny, edge: { k: 0, width: 8 } }, createRng(0))).toThrow(/edge needs whole numbers/);
    for (const surfaceGrid of [
      { cells: 1, share: 0.5 },
      { cells: 8, share: 1 },
      { cells: 8, share: -0.1 },
    ])
      expect(() => new Encoder({ ...tiny, surfaceGrid }, createRng(0))).toThrow(/surfaceGrid needs a whole number/);
    const none = new Encoder({ ...tiny, edge: null }, createRng(0)); // null, as JSON overrides write "no layer"
    expect(none.edge).toBe(null);
    none.dispose();
  });
});
