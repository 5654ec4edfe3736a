import * as tf from '@tensorflow/tfjs';
import { initBackend } from '../../src/core/model/backend';
import { Encoder, DEFAULT_ENCODER } from '../../src/core/model/encoder';
import { computeLoss } from '../../src/core/model/losses';
import { Adam } from '../../src/core/model/adam';
import { createRng } from '../../src/core/rng';
await initBackend({ prefer: 'wasm' });
const B = 32, N = 512;
const enc = new Encoder(DEFAULT_ENCODER, createRng(1));
const adam = new Adam(enc.variables);
const rng = createRng(2);
const buf = Float32Array.from({ length: 2 * B * N * 3 }, () => rng.uniform(-1, 1));
const vars = enc.variables;
const tG: number[] = [], tA: number[] = [], tAll: number[] = [];
for (let rep = 0; rep < 8; rep++) {
  const t0 = performance.now();
  tf.tidy(() => {
    const input = tf.tensor3d(buf, [2 * B, N, 3]);
    const { value, grads } = tf.variableGrads(() => {
      const z = enc.project(enc.pooled(input));
      return computeLoss({ name: 'nt-xent', temperature: 0.1, margin: 0.2 }, z.slice([0, 0], [B, -1]) as tf.Tensor2D, z.slice([B, 0], [B, -1]) as tf.Tensor2D, null);
    }, vars);
    value.dataSync();
    const t1 = performance.now();
    tG.push(t1 - t0);
    adam.apply(vars.map((v) => grads[v.name]), 1e-3);
    vars[0].dataSync();
    tA.push(performance.now() - t1);
  });
  tAll.push(performance.now() - t0);
}
const med = (a: number[]) => a.slice(2).sort((x, y) => x - y)[Math.floor((a.length - 2) / 2)].toFixed(1);
console.log('grads (value read)', med(tG), 'adam', med(tA), 'total', med(tAll));
