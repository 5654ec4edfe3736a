// Exact top-k over many embeddings, and D2 descriptor throughput.

import { d2Histogram } from '../src/core/retrieval/d2';
import { EmbeddingIndex } from '../src/core/retrieval/index';
import { TensorIndex } from '../src/core/retrieval/tensor-index';
import { initBackend } from '../src/core/model/backend';
import { createRng } from '../src/core/rng';
import { fmt, report, time } from './timing';

export async function benchRetrieval(): Promise<void> {
  await initBackend({ prefer: 'wasm' });
  const rows: [string, string][] = [];
  const rng = createRng(1);
  const dim = 256;
  for (const count of [10_000, 100_000]) {
    const vectors = new Float32Array(count * dim);
    for (let i = 0; i < vectors.length; i++) vectors[i] = rng.normal();
    const index = new EmbeddingIndex(
      vectors,
      dim,
      Array.from({ length: count }, (_, i) => ({ name: String(i), label: '', diagonal: 1 })),
    );
    const q = Float32Array.from({ length: dim }, () => rng.normal());
    const t = time(() => index.query(q, 10), { repeats: 15, warmup: 3 });
    rows.push([
      `exact top-10, ${count.toLocaleString('en-GB')} × ${dim}, JS scan`,
      `${fmt(t.medianMs, 2)} ms median (min ${fmt(t.minMs, 2)})`,
    ]);
    const tensor = new TensorIndex(vectors, dim, index.entries);
    const same =
      JSON.stringify(tensor.query(q, 10).map((h) => h.index)) ===
      JSON.stringify(index.query(q, 10).map((h) => h.index));
    const tt = time(() => tensor.query(q, 10), { repeats: 15, warmup: 3 });
    rows.push([
      `exact top-10, ${count.toLocaleString('en-GB')} × ${dim}, tfjs-wasm matMul`,
      `${fmt(tt.medianMs, 2)} ms median (min ${fmt(tt.minMs, 2)}); same top-10 as the JS scan: ${same}`,
    ]);
    tensor.dispose();
  }
  const cloud = Float32Array.from({ length: 2048 * 3 }, () => rng.uniform(-1, 1));
  const d2 = time(
    () => {
      for (let i = 0; i < 50; i++) d2Histogram(cloud, rng);
    },
    { repeats: 5, warmup: 1 },
  );
  rows.push(['D2 descriptor (16 384 pairs, 64 bins)', `${fmt(50 / (d2.medianMs / 1000), 0)} parts/s`]);
  report('retrieval', rows);
}
