// The EdgeConv layer's ops (Wang et al. 2019, "Dynamic Graph CNN for Learning on Point Clouds", eq. 8) on the
// input points, with hand-written gradients where tfjs's own were slow on the CPU.

import * as tf from '@tensorflow/tfjs';
import { columnSums, type Layer } from './point-mlp';
import { neighbourMax as neighbourMaxKernel } from './neighbour-max';
import { readFloats } from '../backend';

/**
 * The EdgeConv layer (Wang et al. 2019, eq. 8) on the input points: h_i = max_j relu([f_i, x_j − x_i]·W + b)
 * over each point's k nearest points j. Split W into W_f (rows for f_i) and W_d (rows for x_j − x_i): the
 * edge term is A_i + C_j with A = F·W_f − X·W_d + b and C = X·W_d, both per point, and since relu is monotone
 * h_i = relu(A_i + max_j C_j). Two small matMuls over B·N rows and a neighbour max replace one matMul over
 * B·N·k edge rows; tfjs differentiates the matMuls, `neighbourMax` scatters its gradient to the winners.
 */
export function edgeConv(
  x: tf.Tensor2D,
  neighbours: Int32Array,
  k: number,
  layer: Layer,
  inference = false,
): tf.Tensor2D {
  const diff = 3; // x y z, the leading channels, enter the difference
  return tf.tidy(() => {
    const [P, F] = x.shape;
    const W = layer.w.shape[1] as number;
    const wf = tf.slice(layer.w, [0, 0], [F, W]);
    const wd = tf.slice(layer.w, [F, 0], [diff, W]);
    const xd = F === diff ? x : tf.slice(x, [0, 0], [P, diff]);
    const c = dense(xd, wd as tf.Tensor2D);
    const a = tf.sub(dense(x, wf as tf.Tensor2D, layer.b as tf.Tensor1D), c);
    const m = inference
      ? neighbourMaxValues(c as tf.Tensor2D, neighbours, k)
      : neighbourMax(c as tf.Tensor2D, neighbours, k);
    return tf.relu(tf.add(a, m)) as tf.Tensor2D;
  });
}

/**
 * x·w (+ b) with a hand-written gradient in non-transposed products: tfjs-wasm's matMul with a transpose flag,
 * which autodiff of tf.matMul uses, took 4–8× as long as an explicit transpose and a plain matMul on the
 * (16 384 × 64) layer inputs here, and its bias gradient (a Sum over rows) is slower than a ones-row matMul.
 */
function dense(x: tf.Tensor2D, w: tf.Tensor2D, b?: tf.Tensor1D): tf.Tensor2D {
  const op = tf.customGrad((...args: unknown[]) => {
    const save = args[args.length - 1] as (t: tf.Tensor[]) => void;
    const [xs, ws] = args as [tf.Tensor2D, tf.Tensor2D];
    save([xs, ws]);
    const value = b ? tf.add(tf.matMul(xs, ws), args[2] as tf.Tensor1D) : tf.matMul(xs, ws);
    return {
      value,
      gradFunc: (dy: tf.Tensor, saved: tf.Tensor[]) => {
        const [sx, sw] = saved as [tf.Tensor2D, tf.Tensor2D];
        const d = dy as tf.Tensor2D;
        const grads = [tf.matMul(d, tf.transpose(sw)), tf.matMul(tf.transpose(sx), d)];
        return b ? [...grads, columnSums(d)] : grads;
      },
    };
  });
  return (b ? op(x, w, b) : op(x, w)) as tf.Tensor2D;
}

/**
 * M_i = max over the k rows j = neighbours[i·k + m] of C_j, channel by channel (C: (P, W), P = B·N).
 * Gradient: each output's gradient goes to the row that won it (the first in neighbour order on ties).
 */
function neighbourMax(c: tf.Tensor2D, neighbours: Int32Array, k: number): tf.Tensor2D {
  const op = tf.customGrad((...args: unknown[]) => {
    const save = args[args.length - 1] as (t: tf.Tensor[]) => void;
    const input = args[0] as tf.Tensor2D;
    const [P, W] = input.shape;
    const v = readFloats(input); // read through before the tensors below are made
    const out = new Float32Array(P * W);
    const win = new Int32Array(P * W);
    for (let p = 0; p < P; p++) {
      const o = p * W;
      const first = neighbours[p * k] * W;
      for (let ch = 0; ch < W; ch++) {
        out[o + ch] = v[first + ch];
        win[o + ch] = neighbours[p * k];
      }
      for (let m = 1; m < k; m++) {
        const j = neighbours[p * k + m],
          r = j * W;
        for (let ch = 0; ch < W; ch++)
          if (v[r + ch] > out[o + ch]) {
            out[o + ch] = v[r + ch];
            win[o + ch] = j;
          }
      }
    }
    save([tf.tensor1d(win, 'int32')]);
    return {
      value: tf.tensor2d(out, [P, W]),
      gradFunc: (dy: tf.Tensor, saved: tf.Tensor[]) => {
        const g = dy.dataSync(),
          wins = saved[0].dataSync();
        const d = new Float32Array(P * W);
        for (let i = 0; i < P * W; i++) d[wins[i] * W + (i % W)] += g[i];
        return [tf.tensor2d(d, [P, W])];
      },
    };
  });
  return op(c) as tf.Tensor2D;
}

/**
 * The neighbour max's values alone, for inference: no winners kept and no gradient (the same maxima as
 * `neighbourMax`), on the SIMD kernel (ops/neighbour-max.ts). On a batch of 32 × 256 points, k = 32, width 64:
 * JS with winners 2.5 ms a part, JS without 1.6 ms; the kernel took retrieval embedding from 21.2 to 42.7 parts/s.
 */
function neighbourMaxValues(c: tf.Tensor2D, neighbours: Int32Array, k: number): tf.Tensor2D {
  const [P, W] = c.shape;
  return tf.tensor2d(neighbourMaxKernel(readFloats(c), neighbours, P, W, k), [P, W]);
}
