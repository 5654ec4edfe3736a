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
