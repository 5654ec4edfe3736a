import * as tf from '@tensorflow/tfjs';
import { initBackend } from '../../src/core/model/backend';
import { Encoder } from '../../src/core/model/encoder';
import { DEFAULT_ENCODER } from '../../src/core/model/encoder-config';
import { ntXentLoss } from '../../src/core/model/losses/ntxent';
import { createRng } from '../../src/core/rng';
await initBackend({ prefer: 'wasm' });
const B = 32,
  N = Number(process.env.N ?? 512);
const K = Number(process.env.K ?? DEFAULT_ENCODER.edge?.k ?? 0);
const enc = new Encoder(
  { ...DEFAULT_ENCODER, inputFeatures: 'xyz', edge: K > 0 ? { k: K, width: 64 } : null },
  createRng(1),
);
const rng = createRng(2);
const x = tf.tensor3d(
  Float32Array.from({ length: 2 * B * N * 3 }, () => rng.uniform(-1, 1)),
  [2 * B, N, 3],
);
const time = (name: string, f: () => void, reps = 5) => {
  f();
  f();
  const t0 = performance.now();
  for (let i = 0; i < reps; i++) f();
  console.log(name.padEnd(36), ((performance.now() - t0) / reps).toFixed(1), 'ms');
};
time('forward pooled', () =>
  tf.tidy(() => {
    enc.pooled(x).dataSync();
  }),
);
time('forward + loss', () =>
  tf.tidy(() => {
    const z = enc.project(enc.pooled(x));
    ntXentLoss(z.slice([0, 0], [B, -1]), z.slice([B, 0], [B, -1]), 0.1).dataSync();
  }),
);
time('forward + backward (grads)', () =>
  tf.tidy(() => {
    const { value, grads } = tf.variableGrads(() => {
      const z = enc.project(enc.pooled(x));
      return ntXentLoss(z.slice([0, 0], [B, -1]) as tf.Tensor2D, z.slice([B, 0], [B, -1]) as tf.Tensor2D, 0.1);
    }, enc.variables);
    value.dataSync();
    Object.values(grads).forEach((g) => g.dataSync());
  }),
);
const prof = await tf.profile(() =>
  tf.tidy(() => {
    const { value, grads } = tf.variableGrads(() => {
      const z = enc.project(enc.pooled(x));
      return ntXentLoss(z.slice([0, 0], [B, -1]) as tf.Tensor2D, z.slice([B, 0], [B, -1]) as tf.Tensor2D, 0.1);
    }, enc.variables);
    value.dataSync();
    Object.values(grads).forEach((g) => g.dataSync());
  }),
);
const byKernel = new Map<string, number>();
for (const k of prof.kernels) byKernel.set(k.name, (byKernel.get(k.name) ?? 0) + (k.kernelTimeMs as number));
console.log(
  [...byKernel.entries()]
    .sort((a, b) => b[1] - a[1])
    .slice(0, 14)
    .map(([k, v]) => `${k}: ${v.toFixed(1)}`)
    .join('\n'),
);
