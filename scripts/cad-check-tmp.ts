import { readFileSync } from 'node:fs';
import { importMesh } from '../src/core/mesh/import';
import { loadCadReader } from '../src/core/mesh/occt';
await loadCadReader();
for (const f of process.argv.slice(2)) {
  const b = readFileSync(f);
  const t = performance.now();
  try {
    const m = importMesh(b.buffer.slice(b.byteOffset, b.byteOffset + b.length) as ArrayBuffer, f);
    console.log(f.split('/').pop(), m.info.format, m.info.bodies, m.info.triangleCount, m.info.extents.map((v) => v.toFixed(3)).join(' × '), m.info.units, (performance.now() - t).toFixed(0), 'ms');
  } catch (e) { console.log(f.split('/').pop(), 'ERR', (e as Error).message); }
}
