// Diagnostic: retrieval with the embedding averaged over R disjoint point subsets of each part, on a saved run,
// by cosine and through the library (diffusion, nearest first), for the learned and the untrained encoder.
//   npx tsx research/scripts/resamplings.ts <library-dir> <run-dir> [R ...]
import { embedForRetrieval } from '../../src/core/model/embed';
import { untrainedEncoder } from '../../src/core/quality/evaluate';
import { embeddingReadings, openSavedRun } from './saved-run';

const [libDir, runDir, ...rs] = process.argv.slice(2);
const { lib, parts, enc, cfg } = await openSavedRun(libDir, runDir);
const untrained = untrainedEncoder(cfg.encoder, cfg.seed);
for (const R of (rs.length ? rs : ['1', '2', '4', '8']).map(Number)) {
  const row = [enc, untrained].map((e) => {
    return embeddingReadings(lib.labels, embedForRetrieval(e, parts, cfg.points, cfg.pose, R));
  });
  console.log(`R = ${R}: learned ${row[0]} | untrained ${row[1]}`);
}
enc.dispose();
untrained.dispose();
