// PointNet-style encoder: a shared per-point MLP (the same weights on every point, so point order cannot
// matter), a symmetric pooling over points, and a projection head used only by the contrastive loss.
// The embedding is the pooled feature before the head, L2-normalised (as SimCLR recommends).
//
// Speed on CPU comes from one fused op for "per-point MLP + max pool" with a hand-written backward pass:
// - matMuls on [B·N, C] with explicit transposes (tfjs-wasm's transposed-matMul path is ~10× slower);
// - the max-pool gradient is sparse (one point per channel per cloud), so the last layer's weight and input
//   gradients are gathered and scattered over B·C rows instead of dense [B·N, C] matMuls. With the default
//   widths this removes more than half the FLOPs of a training step.

import * as tf from '@tensorflow/tfjs';
import type { Rng } from '../rng';

export type Pooling = 'max' | 'max+mean';
/**
 * Per-point inputs: position only; position and normal; or position and the normal's line without its sign —
 * the six distinct entries of n nᵀ (off-diagonals × √2, so the six values have unit length), which an open
 * mesh's unreliable winding cannot flip.
 */
export type InputFeatures = 'xyz' | 'xyz+normal' | 'xyz+unsigned-normal' | 'xyz+local' | 'xyz+normal+local';
export const INPUT_FEATURES: readonly InputFeatures[] = ['xyz', 'xyz+normal', 'xyz+unsigned-normal', 'xyz+local', 'xyz+normal+local'];
/** The inputs in plain words, for the command line and the workbench. */
export const INPUT_LABELS: Record<InputFeatures, string> = {
  xyz: 'x y z',
  'xyz+normal': 'x y z + normal',
  'xyz+unsigned-normal': 'x y z + normal line (sign ignored)',
  'xyz+local': 'x y z + local shape (line, sheet, blob)',
  'xyz+normal+local': 'x y z + normal + local shape',
};

/** Whether the inputs include the local shape of each point's neighbourhood (points/local.ts). */
export function usesLocalShape(f: InputFeatures): boolean {
  return f === 'xyz+local' || f === 'xyz+normal+local';
}

export interface EncoderConfig {
  readonly inputFeatures: InputFeatures;
  /** Per-point MLP widths; the last is the embedding size (doubled with max+mean pooling). */
  readonly widths: readonly number[];
  readonly pooling: Pooling;
  /** Projection head widths (ReLU between), e.g. [256, 128]. */
  readonly projection: readonly number[];
  /**
   * What retrieval compares: the projection head's output (what the contrastive loss shapes) or the pooled
   * features under it. Absent (models saved before the choice existed): pooled. Measured in docs/results.md.
   */
  readonly retrieval?: 'projection' | 'pooled';
  /**
   * A first layer over each point's k nearest neighbours in its cloud (EdgeConv of Wang et al. 2019, "Dynamic
   * Graph CNN for Learning on Point Clouds", eq. 8, on the input points only): h_i = max_j relu(W·[f_i, x_j − x_i] + b)
   * over the k neighbours j (the point itself included), then the per-point MLP. Absent or null: none.
   * `layers` > 1 stacks further EdgeConv layers on the same neighbour graph, each on the previous one's features
   * (h_i, h_j − h_i): on the same graph (the paper's fixed-graph variant), or with `dynamic` on each layer's
   * k nearest neighbours in the previous layer's feature space (the paper's dynamic graph). Absent: 1.
   */
  readonly edge?: { readonly k: number; readonly width: number; readonly layers?: number; readonly dynamic?: boolean } | null;
}

/** Width of the EdgeConv layer when the command line or the workbench switches it on. */
export const EDGE_WIDTH = 64;

/**
 * The default encoder: an EdgeConv layer over 32 neighbours (width 64), then the reference widths 64-128-256,
 * max pooling and head 256-128, on points and normals (inputs are then chosen per library). The neighbour layer
 * lifted furniture retrieval in every seed; 32 neighbours rather than 16 kept the nearest-neighbour rate with the
 * stronger stretching of the `principal-pose` augmentations. A step costs about 1.9× the one at 16 neighbours and
 * 5× a step without the layer, most of it the neighbour search and max in plain JS (docs/results.md).
 */
export const DEFAULT_ENCODER: EncoderConfig = { inputFeatures: 'xyz+normal', edge: { k: 32, width: EDGE_WIDTH }, widths: [64, 128, 256], pooling: 'max', projection: [256, 128], retrieval: 'projection' };

export function inputChannels(f: InputFeatures): number {
  return f === 'xyz' ? 3 : f === 'xyz+normal' || f === 'xyz+local' ? 6 : 9;
}

export function embeddingSize(c: EncoderConfig): number {
  return c.widths[c.widths.length - 1] * (c.pooling === 'max+mean' ? 2 : 1);
}

export function validateEncoderConfig(c: EncoderConfig): void {
  if (!INPUT_FEATURES.includes(c.inputFeatures)) throw new RangeError(`encoder: inputFeatures must be one of ${INPUT_FEATURES.join(', ')}, got ${c.inputFeatures}`);
  if (c.retrieval !== undefined && !['projection', 'pooled'].includes(c.retrieval)) throw new RangeError(`encoder: retrieval must be projection or pooled, got ${c.retrieval}`);
  if (!['max', 'max+mean'].includes(c.pooling)) throw new RangeError(`encoder: pooling must be max or max+mean, got ${c.pooling}`);
  if (c.edge != null && !(Number.isInteger(c.edge.k) && c.edge.k >= 1 && c.edge.k <= 64 && Number.isInteger(c.edge.width) && c.edge.width >= 1 && c.edge.width <= 4096
    && (c.edge.layers === undefined || (Number.isInteger(c.edge.layers) && c.edge.layers >= 1 && c.edge.layers <= 4))
    && (c.edge.dynamic === undefined || typeof c.edge.dynamic === 'boolean'))) {
    throw new RangeError(`encoder: edge needs whole numbers k in [1, 64], width in [1, 4096] and layers in [1, 4] (dynamic: true or false), got ${JSON.stringify(c.edge)}`);
  }
  for (const [name, list] of [['widths', c.widths], ['projection', c.projection]] as const) {
    if (!Array.isArray(list) || list.length === 0 || list.some((w) => !Number.isInteger(w) || w < 1 || w > 4096)) {
      throw new RangeError(`encoder: ${name} must be a non-empty list of whole numbers in [1, 4096], got ${JSON.stringify(list)}`);
    }
  }
}

/** He-normal weights (std √(2/fan_in)) from our Rng, so initialisation is repeatable on every backend. */
function heNormal(rng: Rng, fanIn: number, fanOut: number, gain = 2): Float32Array {
  const std = Math.sqrt(gain / fanIn);
  const w = new Float32Array(fanIn * fanOut);
  for (let i = 0; i < w.length; i++) w[i] = rng.normal() * std;
  return w;
}

export interface Layer {
  readonly w: tf.Variable; // (in, out)
  readonly b: tf.Variable; // (out)
}

/**
 * Forward: for layer l, H_l = relu(H_{l−1}·W_l + b_l) on all B·N points; pooled = max over N (and mean).
 * Returns the pooled features (B, C) with a gradient for x and every W, b.
 */
export function pointMlpPool(x: tf.Tensor2D, B: number, N: number, layers: readonly Layer[], pooling: Pooling): tf.Tensor2D {
  const inputs: tf.Tensor[] = [x];
  for (const l of layers) inputs.push(l.w, l.b);
  const L = layers.length;
  const op = tf.customGrad((...args: unknown[]) => {
    const save = args[args.length - 1] as (t: tf.Tensor[]) => void;
    const xs = args[0] as tf.Tensor2D;
    const acts: tf.Tensor2D[] = [xs];
    let h = xs;
    for (let l = 0; l < L; l++) {
      const w = args[1 + 2 * l] as tf.Tensor2D, b = args[2 + 2 * l] as tf.Tensor1D;
      h = tf.fused.matMul({ a: h, b: w, bias: b, activation: 'relu' }) as tf.Tensor2D; // (B·N, C_{l−1}) x (C_{l−1}, C_l) -> (B·N, C_l)
      acts.push(h);
    }
    const C = layers[L - 1].w.shape[1] as number;
    // Max and argmax over the N points of each cloud in one plain loop: tfjs-wasm's Max and ArgMax over
    // axis 1 of (B, N, C) take ~50 ms each on a reference batch; this pass takes ~15 ms.
    const { maxed, argmax } = maxOverPoints(h, B, N, C);
    const value = pooling === 'max' ? maxed : tf.concat([maxed, tf.mean(tf.reshape(h, [B, N, C]), 1) as tf.Tensor2D], 1);
    save([...acts, argmax, maxed]);
    return {
      value,
      gradFunc: (dy: tf.Tensor, saved: tf.Tensor[]) => backward(dy as tf.Tensor2D, saved, args.slice(1, 1 + 2 * L) as tf.Tensor2D[], B, N, C, pooling),
    };
  });
  return op(...inputs) as tf.Tensor2D;
}

/** Per-cloud, per-channel maximum over points and the index of the winning point. h: (B·N, C). */
function maxOverPoints(h: tf.Tensor2D, B: number, N: number, C: number): { maxed: tf.Tensor2D; argmax: tf.Tensor2D } {
  const data = h.dataSync();
  const best = new Float32Array(B * C).fill(-Infinity);
  const arg = new Int32Array(B * C);
  for (let b = 0; b < B; b++) {
    const o = b * C;
    for (let n = 0; n < N; n++) {
      const r = (b * N + n) * C;
      for (let c = 0; c < C; c++) {
        const v = data[r + c];
        if (v > best[o + c]) { best[o + c] = v; arg[o + c] = n; }
      }
    }
  }
  return { maxed: tf.tensor2d(best, [B, C]), argmax: tf.tensor2d(arg, [B, C], 'int32') };
}

interface Winners {
  readonly B: number; readonly N: number; readonly C: number; readonly K: number;
  readonly win: ArrayLike<number>; // (B, C) winning point of each channel
  readonly winValue: ArrayLike<number>; // (B, C) its value after the ReLU
  readonly gMax: ArrayLike<number>; // (B, C) upstream gradient of the max-pooled features
  readonly prevData: ArrayLike<number>; // (B·N, K) input of the last layer
  readonly wData: ArrayLike<number>; // (K, C) last-layer weights
  readonly dW: Float32Array; readonly db: Float32Array; readonly dPrev: Float32Array;
  /** Row of dPrev that receives point `row` of the flattened batch. */
  readonly slotOf: (row: number) => number;
}

/**
 * The sparse part of the last layer's backward, in plain loops: only the B·C winners carry gradient, so
 *   dW[k, c] += prev[row, k]·g,   db[c] += g,   dPrev[slot(row), k] += g·W[k, c],   row = b·N + argmax[b, c],
 * with g = dy[b, c]·relu'(winner) (0 when the whole channel is zero after the ReLU). Gather/scatter/tile
 * kernels for the same sums cost ~170 ms a reference step on tfjs-wasm; these loops ~10 ms.
 */
function accumulateWinners(w: Winners): void {
  const { B, N, C, K, win, winValue, gMax, prevData, wData, dW, db, dPrev, slotOf } = w;
  for (let b = 0; b < B; b++) {
    for (let c = 0; c < C; c++) {
      const i = b * C + c;
      if (!(winValue[i] > 0)) continue;
      const g = gMax[i];
      if (g === 0) continue;
      const row = b * N + win[i];
      db[c] += g;
      const pr = row * K, pc = slotOf(row) * K;
      for (let k = 0; k < K; k++) {
        dW[k * C + c] += prevData[pr + k] * g;
        dPrev[pc + k] += g * wData[k * C + c];
      }
    }
  }
}

/** Column sums of (M, C) as a (1, M) x (M, C) matMul: faster than a Sum over axis 0 on tfjs-wasm. */
function columnSums(x: tf.Tensor2D): tf.Tensor1D {
  return tf.reshape(tf.matMul(tf.ones([1, x.shape[0]]), x), [x.shape[1]]);
}

function backward(dy: tf.Tensor2D, saved: tf.Tensor[], params: tf.Tensor2D[], B: number, N: number, C: number, pooling: Pooling): tf.Tensor[] {
  const L = params.length / 2;
  const acts = saved.slice(0, L + 1) as tf.Tensor2D[];
  const argmax = saved[L + 1] as tf.Tensor2D;
  const maxed = saved[L + 2] as tf.Tensor2D;
  const grads: tf.Tensor[] = new Array(1 + 2 * L);
  const last = acts[L]; // (B·N, C) post-ReLU output of the last layer
  const prev = acts[L - 1]; // (B·N, C_{L−1})
  const gMax = (pooling === 'max' ? dy : tf.slice(dy, [0, 0], [B, C])).dataSync();
  const win = argmax.dataSync(); // (B, C) winning point per channel
  const winValue = maxed.dataSync(); // (B, C) its value after the ReLU
  const prevData = prev.dataSync();
  const K = prev.shape[1] as number;
  const wLast = params[2 * (L - 1)];
  const wData = wLast.dataSync(); // (K, C)
  const dW = new Float32Array(K * C);
  const db = new Float32Array(C);
  if (pooling === 'max') {
    // Only winning points get any gradient, and in a per-point MLP a point's gradient never leaves its own row:
    // every layer below runs on those rows alone (typically a third of B·N), gathered once in plain loops.
    const slot = new Int32Array(B * N).fill(-1);
    const rows: number[] = [];
    for (let i = 0; i < B * C; i++) {
      if (!(winValue[i] > 0) || gMax[i] === 0) continue;
      const row = Math.floor(i / C) * N + win[i];
      if (slot[row] < 0) { slot[row] = rows.length; rows.push(row); }
    }
    const R = rows.length;
    const dPrevR = new Float32Array(R * K);
    accumulateWinners({ B, N, C, K, win, winValue, gMax, prevData, wData, dW, db, dPrev: dPrevR, slotOf: (row) => slot[row] });
    grads[1 + 2 * (L - 1)] = tf.tensor2d(dW, [K, C]);
    grads[2 + 2 * (L - 1)] = tf.tensor1d(db);
    const gatherRows = (data: Float32Array | Int32Array | Uint8Array, width: number): tf.Tensor2D => {
      const out = new Float32Array(Math.max(1, R) * width);
      for (let j = 0; j < R; j++) out.set(data.subarray(rows[j] * width, rows[j] * width + width), j * width);
      return tf.tensor2d(out, [Math.max(1, R), width]);
    };
    let dPrev = tf.tensor2d(R > 0 ? dPrevR : new Float32Array(K), [Math.max(1, R), K]);
    let above = gatherRows(prevData, K); // acts[L−1] on the gradient rows
    for (let l = L - 2; l >= 0; l--) {
      const width = acts[l].shape[1] as number;
      const below = gatherRows(acts[l].dataSync(), width);
      const dZ = tf.mul(dPrev, tf.step(above)) as tf.Tensor2D; // dZ = dH ⊙ relu'(Z)
      grads[1 + 2 * l] = tf.matMul(tf.transpose(below), dZ); // (width, |R|) x (|R|, C_l)
      grads[2 + 2 * l] = columnSums(dZ);
      dPrev = tf.matMul(dZ, tf.transpose(params[2 * l]));
      above = below;
    }
    // Input gradient (unused in training, kept for gradient checks): scatter the rows back.
    const F = acts[0].shape[1] as number;
    const dx = new Float32Array(B * N * F);
    const dxR = dPrev.dataSync();
    for (let j = 0; j < R; j++) dx.set(dxR.subarray(j * F, j * F + F), rows[j] * F);
    grads[0] = tf.tensor2d(dx, [B * N, F]);
    return grads;
  }
  // With a mean term every point gets gradient: the last layer's dZ is dense (sparse max part + dy_mean/N).
  const dPrevData = new Float32Array(B * N * K);
  accumulateWinners({ B, N, C, K, win, winValue, gMax, prevData, wData, dW, db, dPrev: dPrevData, slotOf: (row) => row });
  const gMean = tf.slice(dy, [0, C], [B, C]);
  const dense = tf.reshape(tf.tile(tf.reshape(tf.div(gMean, N), [B, 1, C]), [1, N, 1]), [B * N, C]);
  const dZLast = tf.mul(dense, tf.step(last)) as tf.Tensor2D;
  grads[1 + 2 * (L - 1)] = tf.add(tf.matMul(tf.transpose(prev), dZLast), tf.tensor2d(dW, [K, C]));
  grads[2 + 2 * (L - 1)] = tf.add(columnSums(dZLast), tf.tensor1d(db));
  let dPrev = tf.add(tf.matMul(dZLast, tf.transpose(wLast)), tf.tensor2d(dPrevData, [B * N, K])) as tf.Tensor2D;
  // Dense layers below: dZ = dH ⊙ relu'(Z); dW = Hᵀ·dZ; db = Σ dZ; dH_below = dZ·Wᵀ.
  for (let l = L - 2; l >= 0; l--) {
    const dZ = tf.mul(dPrev, tf.step(acts[l + 1])) as tf.Tensor2D;
    grads[1 + 2 * l] = tf.matMul(tf.transpose(acts[l]), dZ);
    grads[2 + 2 * l] = columnSums(dZ);
    dPrev = tf.matMul(dZ, tf.transpose(params[2 * l]));
  }
  grads[0] = dPrev; // input gradient (unused in training, kept for gradient checks)
  return grads;
}

/**
 * The EdgeConv layer (Wang et al. 2019, eq. 8) on the input points: h_i = max_j relu([f_i, x_j − x_i]·W + b)
 * over each point's k nearest points j. Split W into W_f (rows for f_i) and W_d (rows for x_j − x_i): the
 * edge term is A_i + C_j with A = F·W_f − X·W_d + b and C = X·W_d, both per point, and since relu is monotone
 * h_i = relu(A_i + max_j C_j). Two small matMuls over B·N rows and a neighbour max replace one matMul over
 * B·N·k edge rows; tfjs differentiates the matMuls, `neighbourMax` scatters its gradient to the winners.
 * `diff` leading channels enter the difference: x y z on the input points, all of them in a stacked layer.
 */
function edgeConv(x: tf.Tensor2D, neighbours: Int32Array, k: number, diff: number, layer: Layer): tf.Tensor2D {
  return tf.tidy(() => {
    const [P, F] = x.shape;
    const W = layer.w.shape[1] as number;
    const wf = tf.slice(layer.w, [0, 0], [F, W]);
    const wd = tf.slice(layer.w, [F, 0], [diff, W]);
    const xd = F === diff ? x : tf.slice(x, [0, 0], [P, diff]);
    const c = dense(xd, wd as tf.Tensor2D);
    const a = tf.sub(dense(x, wf as tf.Tensor2D, layer.b as tf.Tensor1D), c);
    return tf.relu(tf.add(a, neighbourMax(c as tf.Tensor2D, neighbours, k))) as tf.Tensor2D;
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
    const v = input.dataSync() as Float32Array;
    const out = new Float32Array(P * W);
    const win = new Int32Array(P * W);
    for (let p = 0; p < P; p++) {
      const o = p * W;
      const first = neighbours[p * k] * W;
      for (let ch = 0; ch < W; ch++) { out[o + ch] = v[first + ch]; win[o + ch] = neighbours[p * k]; }
      for (let m = 1; m < k; m++) {
        const j = neighbours[p * k + m], r = j * W;
        for (let ch = 0; ch < W; ch++) if (v[r + ch] > out[o + ch]) { out[o + ch] = v[r + ch]; win[o + ch] = j; }
      }
    }
    save([tf.tensor1d(win, 'int32')]);
    return {
      value: tf.tensor2d(out, [P, W]),
      gradFunc: (dy: tf.Tensor, saved: tf.Tensor[]) => {
        const g = dy.dataSync(), wins = saved[0].dataSync();
        const d = new Float32Array(P * W);
        for (let i = 0; i < P * W; i++) d[wins[i] * W + (i % W)] += g[i];
        return [tf.tensor2d(d, [P, W])];
      },
    };
  });
  return op(c) as tf.Tensor2D;
}

/**
 * The k nearest points of each point within its cloud (brute force; the point itself first, ties by index),
 * as rows of the (B·N) batch: entry (b·N + i)·k + m. x: (B, N, F) row-major with x y z first.
 */
export function neighbourIndex(x: Float32Array, B: number, N: number, F: number, k: number): Int32Array {
  const out = new Int32Array(B * N * k);
  const best = new NearestK(k);
  for (let b = 0; b < B; b++) {
    const base = b * N * F;
    for (let i = 0; i < N; i++) {
      const xi = base + i * F;
      const x0 = x[xi], x1 = x[xi + 1], x2 = x[xi + 2];
      best.start(i);
      for (let j = 0; j < N; j++) {
        if (j === i) continue;
        const xj = base + j * F;
        const d0 = x[xj] - x0, d1 = x[xj + 1] - x1, d2 = x[xj + 2] - x2;
        best.offer(d0 * d0 + d1 * d1 + d2 * d2, j);
      }
      best.write(out, (b * N + i) * k, b * N);
    }
  }
  return out;
}

/** The k smallest keys offered so far, ascending (ties keep the earlier), the point itself held first. */
class NearestK {
  private readonly key: Float64Array;
  private readonly row: Int32Array;
  private n = 1;
  private worst = Infinity; // a candidate must be strictly nearer than this to enter
  constructor(private readonly k: number) {
    this.key = new Float64Array(k);
    this.row = new Int32Array(k);
  }
  start(self: number): void {
    this.key[0] = -Infinity; this.row[0] = self; this.n = 1;
    this.worst = this.k === 1 ? -Infinity : Infinity;
  }
  offer(v: number, j: number): void {
    if (!(v < this.worst)) return;
    const { key, row, k } = this;
    let at = this.n < k ? this.n++ : k - 1;
    while (at > 0 && v < key[at - 1]) { key[at] = key[at - 1]; row[at] = row[at - 1]; at--; }
    key[at] = v; row[at] = j;
    if (this.n === k) this.worst = key[k - 1];
  }
  /** Rows (offset by `base`) into out[o … o + k). */
  write(out: Int32Array, o: number, base: number): void {
    for (let m = 0; m < this.k; m++) out[o + m] = base + this.row[m];
  }
}

/**
 * The k nearest points of each point in feature space (squared Euclidean distance between rows of h within a
 * cloud, the point itself first, ties by index), for the dynamic graph of Wang et al. 2019: the pairwise dot
 * products come from one batched tfjs matMul, the selection from a plain loop. h: (B·N, C).
 */
export function featureNeighbourIndex(h: tf.Tensor2D, B: number, N: number, k: number): Int32Array {
  const C = h.shape[1] as number;
  const gram = tf.tidy(() => { const h3 = tf.reshape(h, [B, N, C]) as tf.Tensor3D; return tf.matMul(h3, tf.transpose(h3, [0, 2, 1])); }); // explicit transpose: see `dense`
  const g = gram.dataSync() as Float32Array;
  gram.dispose();
  const out = new Int32Array(B * N * k);
  const best = new NearestK(k);
  for (let b = 0; b < B; b++) {
    const base = b * N * N;
    for (let i = 0; i < N; i++) {
      // ‖h_i − h_j‖² = g_ii + g_jj − 2 g_ij; g_ii is the same for every j, so rank by g_jj − 2 g_ij.
      const row = base + i * N;
      best.start(i);
      for (let j = 0; j < N; j++) if (j !== i) best.offer(g[base + j * N + j] - 2 * g[row + j], j);
      best.write(out, (b * N + i) * k, b * N);
    }
  }
  return out;
}

/** EdgeConv inputs [f_i, x_j − x_i] over `neighbourIndex` (B·N·k, F + 3): the layer's definition, kept for checks. */
export function edgeFeatures(x: Float32Array, B: number, N: number, F: number, k: number): Float32Array {
  const nbr = neighbourIndex(x, B, N, F, k);
  const out = new Float32Array(B * N * k * (F + 3));
  for (let e = 0; e < B * N * k; e++) {
    const xi = Math.floor(e / k) * F, xj = nbr[e] * F, o = e * (F + 3);
    for (let f = 0; f < F; f++) out[o + f] = x[xi + f];
    out[o + F] = x[xj] - x[xi]; out[o + F + 1] = x[xj + 1] - x[xi + 1]; out[o + F + 2] = x[xj + 2] - x[xi + 2];
  }
  return out;
}

let instances = 0; // tfjs variable names must be unique per process

export class Encoder {
  readonly config: EncoderConfig;
  readonly layers: Layer[];
  readonly head: Layer[];
  readonly edge: Layer | null;
  /** EdgeConv layers after the first (edge.layers − 1 of them), on the same neighbour graph. */
  readonly edgeStack: Layer[];

  constructor(config: EncoderConfig, rng: Rng) {
    validateEncoderConfig(config);
    this.config = config;
    const id = `enc${++instances}`;
    const make = (fanIn: number, fanOut: number, name: string, gain: number): Layer => ({
      w: tf.variable(tf.tensor2d(heNormal(rng, fanIn, fanOut, gain), [fanIn, fanOut]), true, `${id}/${name}/w`),
      b: tf.variable(tf.zeros([fanOut]), true, `${id}/${name}/b`),
    });
    let c = inputChannels(config.inputFeatures);
    this.edge = config.edge ? make(c + 3, config.edge.width, 'edge', 2) : null;
    if (config.edge) c = config.edge.width;
    this.edgeStack = Array.from({ length: config.edge ? (config.edge.layers ?? 1) - 1 : 0 }, (_, i) => make(2 * c, c, `edge${i + 1}`, 2));
    this.layers = config.widths.map((w, i) => { const l = make(c, w, `point${i}`, 2); c = w; return l; });
    c = embeddingSize(config);
    this.head = config.projection.map((w, i) => {
      const last = i === config.projection.length - 1;
      const l = make(c, w, `head${i}`, last ? 1 : 2);
      c = w;
      return l;
    });
  }

  get variables(): tf.Variable[] {
    return [...(this.edge ? [this.edge] : []), ...this.edgeStack, ...this.layers, ...this.head].flatMap((l) => [l.w, l.b]);
  }

  /** Stable names for saving: "point0/w", …, "head1/b" (independent of the instance). */
  get weightNames(): string[] {
    return [
      ...(this.edge ? ['edge/w', 'edge/b'] : []),
      ...this.edgeStack.flatMap((_, i) => [`edge${i + 1}/w`, `edge${i + 1}/b`]),
      ...this.layers.flatMap((_, i) => [`point${i}/w`, `point${i}/b`]),
      ...this.head.flatMap((_, i) => [`head${i}/w`, `head${i}/b`]),
    ];
  }

  /** Pooled features (B, C) of a batch x: (B, N, F). */
  pooled(x: tf.Tensor3D): tf.Tensor2D {
    const [B, N, F] = x.shape;
    const expected = inputChannels(this.config.inputFeatures);
    if (F !== expected) throw new RangeError(`encoder: input has ${F} channels per point, expected ${expected} (${this.config.inputFeatures})`);
    if (!this.edge) return pointMlpPool(tf.reshape(x, [B * N, F]), B, N, this.layers, this.config.pooling);
    return tf.tidy(() => pointMlpPool(this.edgeOutput(x), B, N, this.layers, this.config.pooling));
  }

  /** Per-point output of the EdgeConv layer (B·N, width) for a batch x: (B, N, F); only with an edge layer. */
  edgeOutput(x: tf.Tensor3D): tf.Tensor2D {
    if (!this.edge) throw new Error('encoder: no EdgeConv layer in this configuration');
    const [B, N, F] = x.shape;
    const k = Math.min(this.config.edge!.k, N);
    return tf.tidy(() => {
      const flat = tf.reshape(x, [B * N, F]) as tf.Tensor2D;
      const neighbours = neighbourIndex(flat.dataSync() as Float32Array, B, N, F, k);
      let h = edgeConv(flat, neighbours, k, 3, this.edge!);
      for (const layer of this.edgeStack) {
        const graph = this.config.edge!.dynamic ? featureNeighbourIndex(h, B, N, k) : neighbours;
        h = edgeConv(h, graph, k, h.shape[1] as number, layer);
      }
      return h;
    });
  }

  /** L2-normalised embeddings: what retrieval uses — the head's output (B, P), or the pooled features (B, C). */
  embed(x: tf.Tensor3D): tf.Tensor2D {
    return tf.tidy(() => {
      const pooled = this.pooled(x);
      return l2Normalise(this.config.retrieval === 'projection' ? this.project(pooled) : pooled);
    });
  }

  /** Projection-head output (B, P), not normalised; losses normalise as they need. */
  project(pooled: tf.Tensor2D): tf.Tensor2D {
    let h = pooled;
    this.head.forEach((l, i) => {
      const last = i === this.head.length - 1;
      h = tf.add(tf.matMul(h, l.w), l.b);
      if (!last) h = tf.relu(h);
    });
    return h;
  }

  dispose(): void {
    for (const v of this.variables) v.dispose();
  }
}

export const NORMALISE_EPSILON = 1e-12;

/** Rows scaled to unit length: x / max(‖x‖, ε). */
export function l2Normalise(x: tf.Tensor2D): tf.Tensor2D {
  return tf.tidy(() => tf.div(x, tf.maximum(tf.norm(x, 'euclidean', 1, true), NORMALISE_EPSILON)));
}
