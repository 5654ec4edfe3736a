// Import, sampling, augmentation and distance throughput.

import { SphereGeometry } from 'three';
import { importMesh } from '../src/core/mesh/import';
import { writeStlBinary } from '../src/core/mesh/write';
import { PRESETS, viewPair } from '../src/core/points/augment';
import { cloudDistances } from '../src/core/points/distance';
import { PointIndex } from '../src/core/points/kdtree';
import { cumulativeAreas, sampleSurface } from '../src/core/points/sample';
import { createRng } from '../src/core/rng';
import { fmt, report, time } from './timing';

export function benchPoints(): void {
  const g = new SphereGeometry(1, 320, 180); // 320·178·2 + 2·320 = 114 560 triangles
  const stl = writeStlBinary({ positions: g.getAttribute('position').array, indices: g.getIndex()!.array }, 'bench');
  const buffer = stl.buffer.slice(0) as ArrayBuffer;
  let triangles = 0;
  const imp = time(
    () => {
      triangles = importMesh(buffer, 'bench.stl').info.triangleCount;
    },
    { repeats: 5 },
  );
  const mesh = importMesh(buffer, 'bench.stl').mesh;
  const cum = cumulativeAreas(mesh);
  const n = 100_000;
  const rng = createRng(1);
  const samp = time(() => sampleSurface(mesh, n, rng, { cumulative: cum }));
  report('import and sampling', [
    [
      'binary STL import (weld, clean, orient, measure)',
      `${fmt(stl.length / 1e6 / (imp.medianMs / 1000))} MB/s  (${fmt(stl.length / 1e6)} MB, ${triangles} triangles, ${fmt(imp.medianMs)} ms)`,
    ],
    [
      'surface sampling',
      `${fmt(n / (samp.medianMs / 1000) / 1e6, 2)} M points/s  (${n} points on ${triangles} triangles, ${fmt(samp.medianMs)} ms)`,
    ],
  ]);

  const cloud = sampleSurface(mesh, 1024, createRng(2));
  const pairRng = createRng(3);
  const rows: [string, string][] = [];
  for (const name of ['gentle', 'scan-like', 'aggressive'] as const) {
    const pairs = 50;
    const t = time(
      () => {
        for (let i = 0; i < pairs; i++) viewPair(cloud, PRESETS[name], pairRng);
      },
      { repeats: 5, warmup: 1 },
    );
    rows.push([`view pairs/s, N = 1024, preset "${name}"`, fmt(pairs / (t.medianMs / 1000), 0)]);
  }
  const a = sampleSurface(mesh, 2048, createRng(4));
  const b = sampleSurface(mesh, 2048, createRng(5));
  const cd = time(() => cloudDistances(a, b));
  rows.push(['Chamfer + Hausdorff, 2048 vs 2048 points', `${fmt(cd.medianMs)} ms`]);
  const q = createRng(6);
  const kdt = time(() => {
    const index = new PointIndex(a.positions);
    for (let i = 0; i < 1000; i++) index.nearest(q.uniform(-1, 1), q.uniform(-1, 1), q.uniform(-1, 1), 8);
  });
  const build = time(() => new PointIndex(a.positions));
  rows.push([
    'kd-tree build (2048 points) + 1000 queries of 8-NN',
    `${fmt(kdt.medianMs)} ms (build alone ${fmt(build.medianMs)} ms)`,
  ]);
  report('augmentation and distances', rows);
}
