import { augmentSubset, AUGMENT_KINDS } from '../../src/core/points/augment';
import { makeCloud } from '../../src/core/points/cloud';
import { createRng } from '../../src/core/rng';
const rng = createRng(1);
const P = 2048, n = 512;
const pos = Float32Array.from({ length: P * 3 }, () => rng.uniform(-1, 1));
const pool = makeCloud(pos, pos.slice());
const idx = Uint32Array.from({ length: n }, (_, i) => i * 4);
for (const kind of AUGMENT_KINDS) {
  const pipe = { version: 1 as const, upAxis: 'z' as const, steps: [{ kind, strength: 0.5, probability: 1 }] };
  for (let i = 0; i < 20; i++) augmentSubset(pool, idx, pipe, rng);
  const t0 = performance.now();
  for (let i = 0; i < 200; i++) augmentSubset(pool, idx, pipe, rng);
  console.log(kind.padEnd(14), ((performance.now() - t0) / 200 * 1000).toFixed(0), 'µs per view');
}
