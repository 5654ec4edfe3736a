// Chooses the tfjs backend: wasm (SIMD, single thread) by default, the pure-JS cpu backend as fallback.

import * as tf from '@tensorflow/tfjs';
import { setWasmPaths } from '@tensorflow/tfjs-backend-wasm';

export type BackendName = 'wasm' | 'cpu';

export interface BackendOptions {
  readonly prefer?: BackendName;
  /** In a bundled page or worker: URLs of the .wasm files, keyed by file name (Vite `?url` imports). */
  readonly wasmPaths?: Record<string, string>;
}

/** Initialise and report the backend actually in use. */
export async function initBackend(options: BackendOptions = {}): Promise<BackendName> {
  const prefer = options.prefer ?? 'wasm';
  if (options.wasmPaths) setWasmPaths(options.wasmPaths);
  if (prefer === 'wasm') {
    try {
      // Single-threaded wasm on purpose: the threaded build needs cross-origin isolation, crashed once
      // minified by the production build, and gave no speed-up on two cores. The second core goes to
      // the page and the data work instead.
      tf.env().set('WASM_HAS_MULTITHREAD_SUPPORT', false);
      if (await tf.setBackend('wasm')) {
        await tf.ready();
        return 'wasm';
      }
    } catch {
      // fall through to cpu
    }
  }
  await tf.setBackend('cpu');
  await tf.ready();
  return 'cpu';
}

export function currentBackend(): string {
  return tf.getBackend();
}

interface WasmInternals {
  readonly wasm?: { readonly HEAPU8?: Uint8Array };
  readonly dataIdMap?: { get(id: object): { memoryOffset?: number; dtype?: string } | undefined };
}

/**
 * A float32 tensor's values without a copy where the backend allows it: on wasm, a view into the backend's own heap
 * (what its `readSync` copies out of, 8 MB a batch for the last point layer); elsewhere `dataSync()`. The view is
 * only good until the next tfjs call — any op may grow the heap and detach it — so read it at once and keep nothing.
 */
export function readFloats(t: tf.Tensor): Float32Array {
  if (t.dtype === 'float32' && tf.getBackend() === 'wasm') {
    const b = tf.backend() as unknown as WasmInternals;
    const heap = b.wasm?.HEAPU8,
      info = b.dataIdMap?.get(t.dataId);
    if (
      heap &&
      info &&
      typeof info.memoryOffset === 'number' &&
      info.memoryOffset % 4 === 0 &&
      info.dtype === 'float32'
    )
      return new Float32Array(heap.buffer, heap.byteOffset + info.memoryOffset, t.size);
  }
  return t.dataSync() as Float32Array;
}
