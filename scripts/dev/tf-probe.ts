import * as tf from '@tensorflow/tfjs';
import '@tensorflow/tfjs-backend-wasm';
await tf.setBackend('wasm');
await tf.ready();
console.log('backend', tf.getBackend(), tf.env().getBool('WASM_HAS_SIMD_SUPPORT'), tf.env().getBool('WASM_HAS_MULTITHREAD_SUPPORT'));
const B = 64, N = 512, C = 256;
const x = tf.randomNormal([B * N, 128]);
const w = tf.randomNormal([128, C]);
const t = (name: string, f: () => tf.Tensor | tf.Tensor[]) => {
  for (let i = 0; i < 2; i++) tf.tidy(() => { const r = f(); (Array.isArray(r) ? r[0] : r).dataSync(); });
  const t0 = performance.now();
  const reps = 5;
  for (let i = 0; i < reps; i++) tf.tidy(() => { const r = f(); (Array.isArray(r) ? r[0] : r).dataSync(); });
  console.log(name.padEnd(40), ((performance.now() - t0) / reps).toFixed(1), 'ms');
};
const flops = 2 * B * N * 128 * C;
t('matMul x·w  (' + (flops / 1e9).toFixed(2) + ' GFLOP)', () => tf.matMul(x, w));
const dy = tf.randomNormal([B * N, C]);
t('matMul dy·wT (transposeB flag)', () => tf.matMul(dy, w, false, true));
t('matMul dy·transpose(w)', () => tf.matMul(dy, tf.transpose(w)));
t('matMul xT·dy (transposeA flag)', () => tf.matMul(x, dy, true, false));
t('matMul transpose(x)·dy', () => tf.matMul(tf.transpose(x), dy));
t('transpose(x) alone', () => tf.transpose(x));
const h3 = tf.randomNormal([B, N, C]);
t('max over N', () => tf.max(h3, 1));
const m = tf.max(h3, 1);
t('equal broadcast mask', () => tf.equal(h3, m.expandDims(1)));
t('argMax over N', () => tf.argMax(h3, 1));
const idx = tf.argMax(h3, 1);
t('oneHot(argmax) [B,C,N]', () => tf.oneHot(idx, N));
t('tile m to [B,N,C] + equal', () => tf.equal(h3, tf.tile(m.expandDims(1), [1, N, 1])));
t('relu', () => tf.relu(dy));
t('relu grad mask mul', () => tf.mul(dy, tf.step(dy)));
t('sum axis 0', () => tf.sum(dy, 0));
// scatterND approach
t('scatterND grad for max', () => {
  const bi = tf.range(0, B, 1, 'int32').reshape([B, 1]).tile([1, C]);
  const ci = tf.range(0, C, 1, 'int32').reshape([1, C]).tile([B, 1]);
  const ind = tf.stack([bi, idx, ci], 2).reshape([B * C, 3]);
  return tf.scatterND(ind, tf.randomNormal([B * C]), [B, N, C]);
});
// gather approach: flat index
t('flat one-hot via gather/unsorted seg', () => {
  const flat = idx.mul(tf.scalar(C, 'int32')).add(tf.range(0, C, 1, 'int32').reshape([1, C])).add(tf.range(0, B, 1, 'int32').reshape([B, 1]).mul(tf.scalar(N * C, 'int32')));
  return tf.unsortedSegmentSum(tf.randomNormal([B * C]), flat.reshape([B * C]), B * N * C);
});
