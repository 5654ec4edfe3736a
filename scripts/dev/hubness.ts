// Diagnostic: hubness reduction on a saved run's retrieval embeddings. CSLS (Conneau et al. 2018):
// s'(q, j) = 2·cos(q, j) − r(q) − r(j), r(x) the mean cosine of x to its k nearest library parts; for a query's
// ranking only −r(j) matters, so parts close to everything ("hubs") stop crowding the first hits.
//   [KS=5,10,20,30] npx tsx scripts/dev/hubness.ts <library-dir> <run-dir>...
import { embedForRetrieval } from '../../src/core/model/embed';
import { cosineSimilarity } from '../../src/core/retrieval/metrics';
import { bothReadings, openSavedRun } from './saved-run';

const [libDir, ...runs] = process.argv.slice(2);
for (const run of runs) {
  const { lib, parts, enc, cfg } = await openSavedRun(libDir, run);
  const v = embedForRetrieval(enc, parts, cfg.points, cfg.pose);
  enc.dispose();
  const N = parts.length, cos = cosineSimilarity(v, v.length / N);
  console.log(run, 'cosine   ', bothReadings(lib.labels, cos));
  for (const k of (process.env.KS ?? '5,10,20,30').split(',').map(Number)) {
    const r = new Float64Array(N);
    for (let j = 0; j < N; j++) {
      const s: number[] = [];
      for (let x = 0; x < N; x++) if (x !== j) s.push(cos(j, x));
      s.sort((a, b) => b - a);
      r[j] = s.slice(0, k).reduce((a, b) => a + b, 0) / k;
    }
    console.log(run, `CSLS k=${String(k).padEnd(2)}`, bothReadings(lib.labels, (i, j) => 2 * cos(i, j) - r[i] - r[j]));
  }
}
