// Worker of the benchmark page: the same backend set-up as the training worker, then the reference step.

import wasmPlain from '@tensorflow/tfjs-backend-wasm/dist/tfjs-backend-wasm.wasm?url';
import wasmSimd from '@tensorflow/tfjs-backend-wasm/dist/tfjs-backend-wasm-simd.wasm?url';
import wasmThreaded from '@tensorflow/tfjs-backend-wasm/dist/tfjs-backend-wasm-threaded-simd.wasm?url';
import { initBackend } from '../../src/core/model/backend';
import { REFERENCE_ENCODER, timeStep } from '../speed';

self.onmessage = async (e: MessageEvent<{ repeats: number }>) => {
  try {
    const backend = await initBackend({
      prefer: 'wasm',
      wasmPaths: {
        'tfjs-backend-wasm.wasm': wasmPlain,
        'tfjs-backend-wasm-simd.wasm': wasmSimd,
        'tfjs-backend-wasm-threaded-simd.wasm': wasmThreaded,
      },
    });
    self.postMessage({ msPerStep: timeStep(REFERENCE_ENCODER, 32, 512, e.data.repeats), backend });
  } catch (err) {
    self.postMessage({ error: (err as Error).message });
  }
};
