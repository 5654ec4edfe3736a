// Diagnostic: a saved run's retrieval embedding also averaged over the mirror images of each part (the four
// improper sign choices beside the four proper ones), by cosine and through the library.
//   npx tsx scripts/dev/mirror-tta.ts <library-dir> <run-dir>
import { embedForRetrieval } from '../../src/core/model/embed';
import { DIFFUSION_DEFAULTS, diffusedSimilarity } from '../../src/core/retrieval/diffusion';
import { normaliseRows } from '../../src/core/retrieval/index';
import { cosineSimilarity, evaluateRetrieval } from '../../src/core/retrieval/metrics';
import { openSavedRun } from './saved-run';

const [libDir, runDir] = process.argv.slice(2);
const { lib, parts, enc, cfg } = await openSavedRun(libDir, runDir);
const r3 = (m: { nn: number; first_tier: number; map: number }) => `${m.nn.toFixed(3)} / ${m.first_tier.toFixed(3)} / ${m.map.toFixed(3)}`;
const score = (v: Float32Array) => {
  const sim = cosineSimilarity(v, v.length / parts.length);
  return `${r3(evaluateRetrieval(lib.labels, sim))} · ${r3(evaluateRetrieval(lib.labels, diffusedSimilarity(parts.length, sim, DIFFUSION_DEFAULTS)))}`;
};
const mirror = (a: Float32Array) => { const o = a.slice(); for (let i = 0; i < o.length; i += 3) o[i] = -o[i]; return o; };
const plain = embedForRetrieval(enc, parts, cfg.points, cfg.pose);
console.log(`as trained (${cfg.pose}): ${score(plain)}`);
const mirrored = embedForRetrieval(enc, parts.map((p) => ({ ...p, points: mirror(p.points), normals: mirror(p.normals) })), cfg.points, cfg.pose);
const sum = plain.map((v, i) => v + mirrored[i]);
console.log(`with mirror images: ${score(normaliseRows(sum, sum.length / parts.length))}`);
enc.dispose();
