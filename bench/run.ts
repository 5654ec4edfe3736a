// `npm run bench`: prints throughput figures. Not a test: no thresholds, nothing fails.
// `npm run bench -- points retrieval` runs only those sections.

import { benchPoints } from './points';
import { benchRetrieval } from './retrieval';

const sections: Record<string, () => void | Promise<void>> = {
  points: benchPoints,
  retrieval: benchRetrieval,
  model: async () => (await import('./model')).benchModel(),
  cad: async () => (await import('./cad')).benchCad(),
  database: async () => (await import('./database')).benchDatabase(),
  scale: async () => (await import('./scale')).benchScale(),
};
// Section names; `--name value` pairs after them are the sections' own options (scale reads them).
const wanted = process.argv.slice(2).filter((a, i, all) => !a.startsWith('--') && !all[i - 1]?.startsWith('--'));
console.log(`Shapekin benchmarks — node ${process.version}, ${new Date().toISOString()}`);
for (const [name, fn] of Object.entries(sections)) {
  if (wanted.length ? !wanted.includes(name) : name === 'scale') continue; // scale runs only when asked: it takes minutes
  await fn();
}
