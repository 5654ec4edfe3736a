// Diagnostic: retrieval with the embedding averaged over R disjoint point subsets of each part, on a saved run,
// by cosine and through the library (diffusion, nearest first), for the learned and the untrained encoder.
//   npx tsx scripts/dev/resamplings.ts <library-dir> <run-dir> [R ...]
import { embedForRetrieval } from '../../src/core/model/embed';
import { DIFFUSION_DEFAULTS, diffusedSimilarity } from '../../src/core/retrieval/diffusion';
import { untrainedEncoder } from '../../src/core/retrieval/evaluate';
import { cosineSimilarity, evaluateRetrieval } from '../../src/core/retrieval/metrics';
import { openSavedRun } from './saved-run';

const [libDir, runDir, ...rs] = process.argv.slice(2);
const { lib, parts, enc, cfg } = await openSavedRun(libDir, runDir);
const untrained = untrainedEncoder(cfg.encoder, cfg.seed);
const r3 = (m: { nn: number; first_tier: number; map: number }) => `${m.nn.toFixed(3)} / ${m.first_tier.toFixed(3)} / ${m.map.toFixed(3)}`;
for (const R of (rs.length ? rs : ['1', '2', '4', '8']).map(Number)) {
  const row = [enc, untrained].map((e) => {
    const v = embedForRetrieval(e, parts, cfg.points, cfg.pose, R), sim = cosineSimilarity(v, v.length / parts.length);
    return `${r3(evaluateRetrieval(lib.labels, sim))} · ${r3(evaluateRetrieval(lib.labels, diffusedSimilarity(parts.length, sim, DIFFUSION_DEFAULTS)))}`;
  });
  console.log(`R = ${R}: learned ${row[0]} | untrained ${row[1]}`);
}
enc.dispose(); untrained.dispose();
