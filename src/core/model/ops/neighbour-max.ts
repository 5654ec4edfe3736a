// The EdgeConv layer's neighbour max for inference: out[p][c] = max over the k neighbours j of p of v[j][c]. A
// WebAssembly SIMD kernel (neighbour-max.wat, four channels an instruction) where the host has one, else the
// same loop in JS; both give the same bits (test/core/model/neighbour-max.test.ts).

import { NEIGHBOUR_MAX_WASM } from './neighbour-max-wasm';

interface Kernel {
  readonly memory: WebAssembly.Memory;
  readonly run: (v: number, nb: number, out: number, P: number, W: number, k: number) => void;
}

let kernel: Kernel | null | undefined;

/** The compiled kernel (once per thread), or null where WebAssembly SIMD is not available. */
export function wasmKernel(): Kernel | null {
  if (kernel !== undefined) return kernel;
  try {
    const bytes = Uint8Array.from(atob(NEIGHBOUR_MAX_WASM), (ch) => ch.charCodeAt(0));
    const instance = new WebAssembly.Instance(new WebAssembly.Module(bytes), {});
    const e = instance.exports as { memory: WebAssembly.Memory; neighbourMax: Kernel['run'] };
    kernel = { memory: e.memory, run: e.neighbourMax };
  } catch {
    kernel = null;
  }
  return kernel;
}

/** The plain loop: the reference, and the path for widths that are not a multiple of 4. */
export function neighbourMaxJs(v: Float32Array, neighbours: Int32Array, P: number, W: number, k: number): Float32Array {
  const out = new Float32Array(P * W);
  const acc = new Float32Array(W);
  for (let p = 0; p < P; p++) {
    const r0 = neighbours[p * k] * W;
    for (let ch = 0; ch < W; ch++) acc[ch] = v[r0 + ch];
    for (let m = 1; m < k; m++) {
      const r = neighbours[p * k + m] * W;
      for (let ch = 0; ch < W; ch++) {
        const a = v[r + ch];
        if (a > acc[ch]) acc[ch] = a;
      }
    }
    out.set(acc, p * W);
  }
  return out;
}

/**
 * The neighbour max of v (rows × W) over `neighbours` (P × k row numbers into v), on the SIMD kernel when it can
 * run (W a multiple of 4; a kernel compiled here), else in JS.
 */
export function neighbourMax(v: Float32Array, neighbours: Int32Array, P: number, W: number, k: number): Float32Array {
  const K = W % 4 === 0 && k >= 1 ? wasmKernel() : null;
  if (!K) return neighbourMaxJs(v, neighbours, P, W, k);
  const vBytes = v.length * 4,
    nbBytes = P * k * 4,
    outBytes = P * W * 4;
  const need = vBytes + nbBytes + outBytes;
  const have = K.memory.buffer.byteLength;
  if (need > have) K.memory.grow(Math.ceil((need - have) / 65536));
  const buf = K.memory.buffer;
  new Float32Array(buf, 0, v.length).set(v);
  new Int32Array(buf, vBytes, P * k).set(neighbours.subarray(0, P * k));
  K.run(0, vBytes, vBytes + nbBytes, P, W, k);
  return new Float32Array(buf, vBytes + nbBytes, P * W).slice();
}
