// Training-step and embedding speed of the encoder on the tfjs CPU backends, for the default model and the
// reference configuration (B = 32 pairs, N = 512, widths 64-128-256, projection 256-128, NT-Xent, Adam).

import { initBackend, type BackendName } from '../src/core/model/backend';
import { DEFAULT_ENCODER } from '../src/core/model/encoder-config';
import { Encoder } from '../src/core/model/encoder';
import { embedForRetrieval, embedParts, RETRIEVAL_RESAMPLINGS } from '../src/core/model/embed';
import { REFERENCE_ENCODER, stepFlops, timeStep } from './speed';
import { createRng } from '../src/core/rng';
import { fmt, report } from './timing';

export async function benchModel(): Promise<void> {
  const only = process.env.BENCH_BACKENDS?.split(',') as BackendName[] | undefined;
  for (const backend of only ?? (['wasm', 'cpu'] as BackendName[])) {
    const got = await initBackend({ prefer: backend });
    const rows: [string, string][] = [];
    for (const [name, cfg] of [
      ['reference (xyz, 64-128-256, head 256-128)', REFERENCE_ENCODER],
      [`default (xyz+normal, EdgeConv k = ${DEFAULT_ENCODER.edge?.k}, same widths)`, DEFAULT_ENCODER],
    ] as const) {
      const ms = timeStep(cfg, 32, 512, got === 'cpu' ? 1 : 7);
      const { step } = stepFlops(cfg, 32, 512);
      rows.push([
        `${name}: one step, B = 32 pairs, N = 512`,
        `${fmt(ms, 0)} ms · ${fmt((32 * 1000) / ms, 1)} pairs/s · ${fmt(step / 1e9 / (ms / 1000), 1)} GFLOP/s nominal (${fmt(step / 1e9, 2)} GFLOP)`,
      ]);
      if (got === 'cpu') break; // the pure-JS backend is ~20× slower: one configuration is enough
    }
    if (got === 'wasm') {
      // The shipped view size (256 points) and the EdgeConv option at that size, timed in the same run.
      const xyz = { ...REFERENCE_ENCODER, inputFeatures: 'xyz' as const };
      const plain = timeStep(xyz, 32, 256, 5);
      rows.push(['one step, B = 32 pairs, N = 256 (the default view size), x y z', `${fmt(plain, 0)} ms`]);
      for (const k of [16, 32]) {
        const edge = timeStep({ ...xyz, edge: { k, width: 64 } }, 32, 256, 5);
        rows.push([
          `the same with an EdgeConv first layer (k = ${k}, width 64${k === DEFAULT_ENCODER.edge?.k ? ', the default' : ''})`,
          `${fmt(edge, 0)} ms · ${fmt(edge / plain, 2)}× the plain step`,
        ]);
      }
    }
    const enc = new Encoder(DEFAULT_ENCODER, createRng(3));
    const rng = createRng(4);
    const parts = Array.from({ length: 64 }, () => ({
      points: Float32Array.from({ length: 2048 * 3 }, () => rng.uniform(-1, 1)),
      normals: Float32Array.from({ length: 2048 * 3 }, () => rng.uniform(-1, 1)),
    }));
    if (got === 'wasm') {
      const rate = (run: () => void) => {
        const t0 = performance.now();
        run();
        return fmt(64 / ((performance.now() - t0) / 1000), 0);
      };
      const plain = rate(() => embedParts(enc, parts, 256));
      const one = rate(() => embedForRetrieval(enc, parts, 256, 'principal-axes', 1));
      const shipped = rate(() => embedForRetrieval(enc, parts, 256, 'principal-axes'));
      rows.push([
        `embedding, 256 points a part (default encoder)`,
        `${plain} parts/s plain · ${one} parts/s posed, 4 sign flips · ${shipped} parts/s posed, 4 sign flips × ${RETRIEVAL_RESAMPLINGS} resamplings (what retrieval does)`,
      ]);
    }
    enc.dispose();
    report(`model on tfjs-${got}`, rows);
  }
}
