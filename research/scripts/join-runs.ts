// Dev tool: a file-and-principal run from a files'-axes run and a principal-axes run of the same seed and settings.
// It equals what `shapekin train --pose file-and-principal --seed S` trains (test/core/model/two-encoders.test.ts; the
// furniture seed-0 pair has byte-identical weights), without training again.
//   npx tsx research/scripts/join-runs.ts <file-axes-run> <principal-axes-run> <out-run>
import { loadRun, saveRun } from '../../src/cli/run-dir';

const [a, b, out] = process.argv.slice(2);
if (!out) throw new Error('usage: join-runs.ts <file-axes-run> <principal-axes-run> <out-run>');
const A = await loadRun(a),
  B = await loadRun(b);
if (A.manifest.config.pose !== 'file-axes' || B.manifest.config.pose !== 'principal-axes')
  throw new Error("the first run must be in the files' axes, the second in principal axes");
if (JSON.stringify({ ...A.manifest.config, pose: null }) !== JSON.stringify({ ...B.manifest.config, pose: null }))
  throw new Error('the two runs differ in more than their pose');
await saveRun(out, {
  manifest: {
    ...A.manifest,
    config: { ...A.manifest.config, pose: 'file-and-principal' },
    step: A.manifest.step + B.manifest.step,
    totalSteps: A.manifest.totalSteps + B.manifest.totalSteps,
    history: [
      ...A.manifest.history,
      ...B.manifest.history.map((h) => ({ ...h, step: h.step + A.manifest.totalSteps })),
    ],
  },
  weights: [...A.weights, ...B.weights],
  adam: null,
});
console.log(`joined → ${out}`);
