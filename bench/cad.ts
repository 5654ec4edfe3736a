// CAD and other readers' throughput on real files: the 22 KiCad components in test/fixtures/kicad, each as
// STEP (OpenCascade tessellation) and VRML, read and sampled on one core; a folder of your own with
// `SHAPEKIN_BENCH_DIR=<dir> npm run bench -- cad`.

import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { loadPart } from '../src/core/library';
import { formatOf } from '../src/core/mesh/formats';
import { loadCadReader } from '../src/core/mesh/occt';
import { POOL_POINTS } from '../src/core/model/defaults';
import { fmt, report } from './timing';

function filesUnder(dir: string): string[] {
  return readdirSync(dir)
    .sort()
    .flatMap((n) => {
      const p = join(dir, n);
      return statSync(p).isDirectory() ? filesUnder(p) : formatOf(n) ? [p] : [];
    });
}

export async function benchCad(): Promise<void> {
  const dir = process.env.SHAPEKIN_BENCH_DIR ?? 'test/fixtures/kicad';
  const t0 = performance.now();
  await loadCadReader();
  const loadMs = performance.now() - t0;
  const byFormat = new Map<string, { files: number; ms: number; triangles: number; failed: number }>();
  for (const path of filesUnder(dir)) {
    const b = readFileSync(path);
    const format = formatOf(path)!.label;
    const row = byFormat.get(format) ?? { files: 0, ms: 0, triangles: 0, failed: 0 };
    const t = performance.now();
    try {
      row.triangles += loadPart(b.buffer.slice(b.byteOffset, b.byteOffset + b.length) as ArrayBuffer, path, {
        points: POOL_POINTS,
        seed: 0,
      }).info.triangleCount;
    } catch {
      row.failed++;
    }
    row.ms += performance.now() - t;
    row.files++;
    byFormat.set(format, row);
  }
  report(`reading and sampling real files, one core (${dir})`, [
    ['OpenCascade module load (first CAD file only)', `${fmt(loadMs, 0)} ms`],
    ...[...byFormat].map(([format, r]): [string, string] => [
      `${format}: ${r.files} files`,
      `${fmt(r.files / (r.ms / 1000))} parts/s  (${fmt(r.ms / r.files, 0)} ms a part, ${fmt(r.triangles / r.files, 0)} triangles a part, ${r.failed} failed)`,
    ]),
  ]);
}
