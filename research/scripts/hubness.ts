// Diagnostic: how much the hub correction (CSLS, Conneau et al. 2018; src/core/retrieval/hubness.ts) does on a saved
// run, for several k: each line is "by itself · diffused over the graph built from it". The "no correction" line is
// the ordering before the correction became part of the search; the k = 30 line is what the search does now.
//   [KS=10,20,30,40] npx tsx research/scripts/hubness.ts <library-dir> <run-dir>...
import { disposeEncoders, embedForRetrieval } from '../../src/core/model/embed';
import { encodersFromCheckpoint } from '../../src/core/model/checkpoint';
import { DIFFUSION_DEFAULTS, diffusedSimilarity } from '../../src/core/retrieval/diffusion';
import { hubCorrected } from '../../src/core/retrieval/hubness';
import { cosineSimilarity, evaluateRetrieval } from '../../src/core/retrieval/metrics';
import { openSavedRun, threeMeasures } from './saved-run';

const [libDir, ...runs] = process.argv.slice(2);
for (const run of runs) {
  const { lib, parts, ckpt, cfg } = await openSavedRun(libDir, run, false);
  const enc = encodersFromCheckpoint(ckpt);
  const v = embedForRetrieval(enc, parts, cfg.points, cfg.pose);
  disposeEncoders(enc);
  const N = parts.length,
    cos = cosineSimilarity(v, v.length / N);
  const both = (s: (i: number, j: number) => number) =>
    `${threeMeasures(evaluateRetrieval(lib.labels, s))} · ${threeMeasures(evaluateRetrieval(lib.labels, diffusedSimilarity(N, s, DIFFUSION_DEFAULTS)))}`;
  console.log(run, 'no correction', both(cos));
  for (const k of (process.env.KS ?? '10,20,30,40').split(',').map(Number))
    console.log(run, `CSLS k=${String(k).padEnd(2)}   `, both(hubCorrected(N, cos, k)));
}
