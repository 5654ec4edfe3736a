// `npm run bench`: prints throughput figures. Not a test: no thresholds, nothing fails.

import { benchPoints } from './points';

const sections: Record<string, () => void | Promise<void>> = { points: benchPoints };
const wanted = process.argv.slice(2);
console.log(`Shapekin benchmarks — node ${process.version}, ${new Date().toISOString()}`);
for (const [name, fn] of Object.entries(sections)) {
  if (wanted.length && !wanted.includes(name)) continue;
  await fn();
}
