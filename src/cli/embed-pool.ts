// The command line's embedding pool: worker threads (one per core by default), each with its own copy of the
// model, embed a library in chunks of EMBED_CHUNK parts; the vectors come back in part order and are the bytes a
// single thread gives (a chunk is a whole number of the encoder's batches, and a part's embedding depends only on
// its batch's own points).

import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';
import type { BackendName } from '../core/model/backend';
import type { Checkpoint } from '../core/model/checkpoint';
import { EMBED_BATCH } from '../core/model/embed';
import type { ModelPart } from '../core/model/views';
import type { EmbedThreadRequest } from './embed-thread';

/** Parts a thread embeds per request: two of the encoder's batches (small enough to share out a library evenly). */
export const EMBED_CHUNK = 2 * EMBED_BATCH;

const THREAD_URL = new URL('./embed-thread.ts', import.meta.url).href;

function spawn(): Worker {
  return new Worker(
    `import('tsx/esm/api').then((m) => { m.register(); return import(${JSON.stringify(THREAD_URL)}); })`,
    { eval: true },
  );
}

type Reply =
  | { kind: 'loaded' }
  | { kind: 'embedded'; id: number; vectors: Float32Array }
  | { kind: 'error'; id: number; message: string };

function ask(worker: Worker, req: EmbedThreadRequest, transfer: ArrayBuffer[] = []): Promise<Reply> {
  return new Promise((resolve, reject) => {
    const onMessage = (m: Reply) => {
      if (req.kind === 'embed' && m.kind !== 'loaded' && m.id !== req.id) return;
      done();
      if (m.kind === 'error') reject(new Error(m.message));
      else resolve(m);
    };
    const onError = (e: Error) => {
      done();
      reject(e);
    };
    const done = () => {
      worker.off('message', onMessage);
      worker.off('error', onError);
    };
    worker.on('message', onMessage);
    worker.on('error', onError);
    worker.postMessage(req, transfer);
  });
}

export interface EmbedProgress {
  readonly done: number;
  readonly total: number;
}

/** Threads holding one model, kept across calls of `embed` (each thread's start-up and model load paid once). */
export class EmbedPool {
  private workers: Promise<Worker>[] = [];
  private id = 0;
  readonly threads: number;

  constructor(
    private readonly checkpoint: Checkpoint,
    threads = availableParallelism(),
    private readonly backend: BackendName = 'wasm',
  ) {
    if (!(Number.isInteger(threads) && threads >= 1)) throw new RangeError(`embedding threads: ${threads}`);
    this.threads = threads;
  }

  private worker(slot: number): Promise<Worker> {
    return (this.workers[slot] ??= (async () => {
      const w = spawn();
      await ask(w, { kind: 'load', checkpoint: this.checkpoint, backend: this.backend });
      return w;
    })());
  }

  /** Retrieval embeddings of `parts` (count × D, row-major), in their order. */
  async embed(parts: readonly ModelPart[], onProgress?: (p: EmbedProgress) => void): Promise<Float32Array> {
    const chunks = Math.ceil(parts.length / EMBED_CHUNK);
    const results: Float32Array[] = new Array(chunks);
    let next = 0,
      done = 0;
    const slots = Math.max(1, Math.min(this.threads, chunks));
    const run = async (slot: number) => {
      const worker = await this.worker(slot);
      while (next < chunks) {
        const c = next++;
        const chunk = parts.slice(c * EMBED_CHUNK, (c + 1) * EMBED_CHUNK).map((p) => ({
          points: p.points.slice(), // copies, moved to the thread: the caller keeps its parts
          normals: p.normals.slice(),
        }));
        const reply = await ask(
          worker,
          { kind: 'embed', id: ++this.id, parts: chunk },
          chunk.flatMap((p) => [p.points.buffer as ArrayBuffer, p.normals.buffer as ArrayBuffer]),
        );
        results[c] = (reply as { vectors: Float32Array }).vectors;
        done += chunk.length;
        onProgress?.({ done, total: parts.length });
      }
    };
    await Promise.all(Array.from({ length: slots }, (_, s) => run(s)));
    if (parts.length === 0) return new Float32Array(0);
    const D = results[0].length / Math.min(EMBED_CHUNK, parts.length);
    const all = new Float32Array(parts.length * D);
    results.forEach((r, c) => all.set(r, c * EMBED_CHUNK * D));
    return all;
  }

  async close(): Promise<void> {
    const all = await Promise.allSettled(this.workers.splice(0));
    await Promise.all(all.flatMap((r) => (r.status === 'fulfilled' ? [r.value.terminate()] : [])));
  }
}

/** `EmbedPool.embed` with a pool made and closed around it. */
export async function embedInThreads(
  checkpoint: Checkpoint,
  parts: readonly ModelPart[],
  threads?: number,
  onProgress?: (p: EmbedProgress) => void,
  backend: BackendName = 'wasm',
): Promise<Float32Array> {
  const pool = new EmbedPool(checkpoint, threads, backend);
  try {
    return await pool.embed(parts, onProgress);
  } finally {
    await pool.close();
  }
}
