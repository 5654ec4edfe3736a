// Dev aid: sample some corpus solids to a text file of clouds for a quick look (one "kind x y z" row per point).
//   npx tsx research/scripts/corpus-dump.ts <count> <out.txt>
import { writeFileSync } from 'node:fs';
import { writeStlBinary } from '../../src/core/mesh/write';
import { loadPart } from '../../src/core/library';
import { createRng } from '../../src/core/rng';
import { corpusPart } from '../corpus';
const rng = createRng(7919);
const rows: string[] = [];
for (let i = 0; i < Number(process.argv[2]); i++) {
  const { mesh, kind } = corpusPart(rng);
  const p = loadPart(
    writeStlBinary({ positions: mesh.positions, indices: mesh.indices! }, 'c').buffer as ArrayBuffer,
    `c/${i}.stl`,
    { points: 800, seed: 0 },
  );
  for (let k = 0; k < p.points.length; k += 3)
    rows.push(`${i} ${kind} ${p.points[k]} ${p.points[k + 1]} ${p.points[k + 2]}`);
}
writeFileSync(process.argv[3], rows.join('\n'));
