// Adam (Kingma & Ba 2015, Algorithm 1) with its state in plain view, so a checkpoint can save and restore
// it exactly:  m ← β1·m + (1−β1)·g;  v ← β2·v + (1−β2)·g²;  θ ← θ − lr·m̂ / (√v̂ + ε),
// with m̂ = m / (1 − β1^t), v̂ = v / (1 − β2^t). Checked against tf.train.adam in the tests.

import * as tf from '@tensorflow/tfjs';

export interface AdamState {
  readonly step: number;
  readonly m: Float32Array[];
  readonly v: Float32Array[];
}

export class Adam {
  private m: tf.Variable[];
  private v: tf.Variable[];
  step = 0;

  constructor(
    private readonly params: readonly tf.Variable[],
    readonly beta1 = 0.9,
    readonly beta2 = 0.999,
    readonly epsilon = 1e-8,
  ) {
    // Inside tidy: the zero tensors that seed each variable are let go (the variable keeps its own reference).
    this.m = params.map((p) => tf.tidy(() => tf.variable(tf.zerosLike(p), false)));
    this.v = params.map((p) => tf.tidy(() => tf.variable(tf.zerosLike(p), false)));
  }

  /** One update with gradients in the order of the parameters. */
  apply(grads: readonly tf.Tensor[], learningRate: number): void {
    if (grads.length !== this.params.length)
      throw new RangeError(`Adam: ${grads.length} gradients for ${this.params.length} parameters`);
    this.step += 1;
    const c1 = 1 - this.beta1 ** this.step;
    const c2 = 1 - this.beta2 ** this.step;
    tf.tidy(() => {
      this.params.forEach((p, i) => {
        const g = grads[i];
        const m = tf.add(tf.mul(this.m[i], this.beta1), tf.mul(g, 1 - this.beta1));
        const v = tf.add(tf.mul(this.v[i], this.beta2), tf.mul(tf.square(g), 1 - this.beta2));
        this.m[i].assign(m);
        this.v[i].assign(v);
        p.assign(tf.sub(p, tf.mul(tf.div(tf.div(m, c1), tf.add(tf.sqrt(tf.div(v, c2)), this.epsilon)), learningRate)));
      });
    });
  }

  state(): AdamState {
    return {
      step: this.step,
      m: this.m.map((t) => t.dataSync().slice() as Float32Array),
      v: this.v.map((t) => t.dataSync().slice() as Float32Array),
    };
  }

  restore(s: AdamState): void {
    if (s.m.length !== this.m.length || s.v.length !== this.v.length)
      throw new RangeError('Adam.restore: state is for a different set of parameters');
    tf.tidy(() => {
      s.m.forEach((a, i) => this.m[i].assign(tf.tensor(a, this.m[i].shape)));
      s.v.forEach((a, i) => this.v[i].assign(tf.tensor(a, this.v[i].shape)));
    });
    this.step = s.step;
  }

  dispose(): void {
    tf.dispose([...this.m, ...this.v]);
  }
}

/** Cosine learning-rate schedule with linear warm-up (common practice; cosine decay as in Loshchilov & Hutter 2017). */
export function cosineWithWarmup(
  step: number,
  totalSteps: number,
  peak: number,
  warmupSteps: number,
  floor = 0,
): number {
  if (step < warmupSteps) return (peak * (step + 1)) / warmupSteps;
  const t = totalSteps > warmupSteps ? (step - warmupSteps) / (totalSteps - warmupSteps) : 1;
  return floor + (peak - floor) * 0.5 * (1 + Math.cos(Math.PI * Math.min(1, t)));
}
