// The map's worker: the library's embeddings projected on their two leading principal components
// (core/retrieval/projection.ts). On the page this took 68–90 ms for the demo and 1.6 s at 20,000 parts.

import { pca2d } from '../core/retrieval/projection';

export interface MapRequest {
  readonly id: number;
  readonly vectors: Float32Array;
  readonly dim: number;
}

export interface MapReply {
  readonly id: number;
  readonly xy: Float32Array;
}

self.onmessage = (e: MessageEvent<MapRequest>) => {
  const { id, vectors, dim } = e.data;
  const xy = pca2d(vectors, dim, 60);
  (self as unknown as Worker).postMessage({ id, xy } satisfies MapReply, [xy.buffer]);
};
