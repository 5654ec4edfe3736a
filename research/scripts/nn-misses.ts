// Diagnostic: which parts' first hit (as the search orders through the library: the highest hub-corrected score)
// is from another class, over several saved runs of one library (e.g. the seeds), and what they are taken for;
// a miss in every run is a look-alike, not a seed's accident.
//   npx tsx research/scripts/nn-misses.ts <library-dir> <run-dir>...
import { disposeEncoders, embedForRetrieval } from '../../src/core/model/embed';
import { encodersFromCheckpoint } from '../../src/core/model/checkpoint';
import { hubCorrected } from '../../src/core/retrieval/hubness';
import { cosineSimilarity } from '../../src/core/retrieval/metrics';
import { openSavedRun } from './saved-run';
const [libDir, ...runs] = process.argv.slice(2);
const fails = new Map<string, string[]>();
for (const run of runs) {
  const { lib, parts, ckpt, cfg } = await openSavedRun(libDir, run, false);
  const enc = encodersFromCheckpoint(ckpt);
  const v = embedForRetrieval(enc, parts, cfg.points, cfg.pose);
  disposeEncoders(enc);
  const N = parts.length,
    sim = hubCorrected(N, cosineSimilarity(v, v.length / N));
  for (let i = 0; i < N; i++) {
    let best = -1,
      bs = -Infinity;
    for (let j = 0; j < N; j++) {
      const s = j === i ? -Infinity : sim(i, j);
      if (s > bs) {
        bs = s;
        best = j;
      }
    }
    if (lib.labels[best] !== lib.labels[i]) {
      const k = lib.parts[i].name;
      fails.set(k, [...(fails.get(k) ?? []), lib.parts[best].name]);
    }
  }
}
const counts = Array.from(
  { length: runs.length },
  (_, i) => [...fails.values()].filter((v) => v.length === i + 1).length,
);
console.log(`parts missed in 1…${runs.length} of ${runs.length} runs: ${counts.join(' / ')}`);
for (const [k, v] of [...fails].sort((a, b) => b[1].length - a[1].length))
  console.log(v.length, k.padEnd(40), v.join(', '));
