import { SphereGeometry, Triangle, Vector3 } from 'three';
import { describe, expect, it } from 'vitest';
import bunny from 'bunny';
import { finishMesh } from '../../../src/core/mesh/geometry';
import type { Mesh } from '../../../src/core/mesh/types';
import { makeCloud } from '../../../src/core/points/cloud';
import { samplePart } from '../../../src/core/points/part';
import {
  farthestPointSample,
  normaliseToUnitSphere,
  resamplePoints,
  sampleSurface,
} from '../../../src/core/points/sample';
import { createRng } from '../../../src/core/rng';
import { chiSquare, chiSquareCritical, expectClose, ksCritical, ksStatistic } from '../../helpers';
import { fromThree } from '../../meshes';

const triangle: Mesh = {
  positions: Float32Array.from([0, 0, 0, 1, 0, 0, 0, 1, 0]),
  indices: Uint32Array.from([0, 1, 2]),
};

describe('uniform surface sampling (Osada et al. 2002, square-root barycentric formula)', () => {
  it("Archimedes' hat-box theorem: z of points uniform on a sphere is uniform on [−r, r] (KS, α = 0.001)", () => {
    const sphere = fromThree(new SphereGeometry(1, 192, 96), 'sphere').mesh;
    const n = 20000;
    const cloud = sampleSurface(sphere, n, createRng(1));
    const z = Array.from({ length: n }, (_, i) => cloud.positions[i * 3 + 2]);
    expect(ksStatistic(z, (x) => (x + 1) / 2)).toBeLessThan(ksCritical(n));
    // The test can fail: the same KS test rejects z² (not uniform).
    expect(
      ksStatistic(
        z.map((v) => v * Math.abs(v)),
        (x) => (x + 1) / 2,
      ),
    ).toBeGreaterThan(ksCritical(n));
  });
  it('inside a triangle: x has the marginal CDF 1 − (1 − x)² of the uniform density on the unit right triangle (KS)', () => {
    const n = 20000;
    const cloud = sampleSurface(triangle, n, createRng(2));
    const x = Array.from({ length: n }, (_, i) => cloud.positions[i * 3]);
    expect(ksStatistic(x, (v) => 1 - (1 - v) ** 2)).toBeLessThan(ksCritical(n));
    // The naive formula (r1, r2 as barycentric weights, folded) is not uniform in the same sense — check
    // that the test would notice an unfolded u ~ U(0,1) marginal.
    expect(
      ksStatistic(
        x.map((_, i) => (i + 0.5) / n),
        (v) => 1 - (1 - v) ** 2,
      ),
    ).toBeGreaterThan(ksCritical(n));
  });
  it('the four midpoint sub-triangles (equal areas) receive equal counts (chi-square, 3 dof, α = 0.001)', () => {
    const n = 40000;
    const cloud = sampleSurface(triangle, n, createRng(3));
    const counts = [0, 0, 0, 0];
    for (let i = 0; i < n; i++) {
      const x = cloud.positions[i * 3],
        y = cloud.positions[i * 3 + 1];
      counts[x > 0.5 ? 1 : y > 0.5 ? 2 : x + y < 0.5 ? 0 : 3]++;
    }
    expect(chiSquare(counts, [n / 4, n / 4, n / 4, n / 4])).toBeLessThan(chiSquareCritical(3));
  });
  it('per-triangle counts are proportional to area (chi-square on the Stanford bunny, dof = T − 1)', () => {
    const positions = Float32Array.from(bunny.positions.flat());
    const mesh = finishMesh('bunny', 'obj', { positions, indices: Uint32Array.from(bunny.cells.flat()) }, 0).mesh;
    const T = mesh.indices!.length / 3;
    const n = T * 40;
    const which = new Uint32Array(n);
    const cloud = sampleSurface(mesh, n, createRng(4), { triangleOut: which });
    const observed = new Float64Array(T);
    for (const t of which) observed[t]++;
    const areas = new Float64Array(T);
    const tri = new Triangle();
    let total = 0;
    for (let t = 0; t < T; t++) {
      const v = (k: number) => new Vector3().fromArray(mesh.positions, mesh.indices![t * 3 + k] * 3);
      areas[t] = tri.set(v(0), v(1), v(2)).getArea(); // three.js Triangle.getArea as the reference
      total += areas[t];
    }
    const expected = Array.from(areas, (a) => (a / total) * n);
    const keep = expected.map((e, i) => [e, observed[i]]).filter(([e]) => e >= 5); // the usual E ≥ 5 rule
    expect(
      chiSquare(
        keep.map((k) => k[1]),
        keep.map((k) => k[0]),
      ),
    ).toBeLessThan(chiSquareCritical(keep.length - 1));
    // And every sample lies on its triangle (three.js Triangle.closestPointToPoint).
    const p = new Vector3(),
      q = new Vector3();
    let worst = 0;
    for (let i = 0; i < 2000; i++) {
      const t = which[i];
      const v = (k: number) => new Vector3().fromArray(mesh.positions, mesh.indices![t * 3 + k] * 3);
      tri.set(v(0), v(1), v(2));
      p.fromArray(cloud.positions, i * 3);
      tri.closestPointToPoint(p, q);
      worst = Math.max(worst, p.distanceTo(q));
    }
    expect(worst).toBeLessThan(1e-5);
  });
  it('the same seed gives the same cloud; another seed a different one', () => {
    const a = sampleSurface(triangle, 100, createRng(7));
    const b = sampleSurface(triangle, 100, createRng(7));
    const c = sampleSurface(triangle, 100, createRng(8));
    expect(Array.from(a.positions)).toEqual(Array.from(b.positions));
    expect(Array.from(a.positions)).not.toEqual(Array.from(c.positions));
  });
  it('normals are the unit face normals', () => {
    const cloud = sampleSurface(triangle, 10, createRng(1));
    expectClose(cloud.normals!.subarray(0, 3), [0, 0, 1], { atol: 1e-7 });
  });
});

describe('point-only inputs and down-sampling', () => {
  const grid = makeCloud(Float32Array.from({ length: 300 }, (_, i) => (i % 3 === 0 ? Math.floor(i / 3) : 0)));
  it('resampling to fewer points takes distinct points; to more keeps every point at least once', () => {
    const fewer = resamplePoints(grid, 50, createRng(1));
    const xs = new Set(Array.from({ length: 50 }, (_, i) => fewer.positions[i * 3]));
    expect(xs.size).toBe(50);
    const more = resamplePoints(grid, 250, createRng(1));
    const all = new Set(Array.from({ length: 250 }, (_, i) => more.positions[i * 3]));
    expect(all.size).toBe(100);
    expect(more.count).toBe(250);
  });
  it('farthest-point sampling is within the factor 2 of the optimal k-centre radius (Gonzalez 1985)', () => {
    const rng = createRng(11);
    const pts = makeCloud(Float32Array.from({ length: 12 * 3 }, () => rng.uniform(-1, 1)));
    const k = 3;
    const radius = (chosen: number[]) => {
      let worst = 0;
      for (let i = 0; i < pts.count; i++) {
        let best = Infinity;
        for (const c of chosen)
          best = Math.min(
            best,
            Math.hypot(
              pts.positions[i * 3] - pts.positions[c * 3],
              pts.positions[i * 3 + 1] - pts.positions[c * 3 + 1],
              pts.positions[i * 3 + 2] - pts.positions[c * 3 + 2],
            ),
          );
        worst = Math.max(worst, best);
      }
      return worst;
    };
    let optimal = Infinity; // brute force over all 220 triples
    for (let a = 0; a < 12; a++)
      for (let b = a + 1; b < 12; b++) for (let c = b + 1; c < 12; c++) optimal = Math.min(optimal, radius([a, b, c]));
    for (let seed = 0; seed < 5; seed++) {
      const fps = farthestPointSample(pts, k, createRng(seed));
      const chosen = Array.from({ length: k }, (_, j) => {
        for (let i = 0; i < pts.count; i++)
          if (pts.positions[i * 3] === fps.positions[j * 3] && pts.positions[i * 3 + 1] === fps.positions[j * 3 + 1])
            return i;
        throw new Error('FPS returned a point not in the input');
      });
      expect(radius(chosen)).toBeLessThanOrEqual(2 * optimal + 1e-12);
    }
  });
});

describe('normalisation to the unit sphere keeps the real size', () => {
  it('centres on the centroid, scales the farthest point to radius 1, and reports the scale', () => {
    const cloud = makeCloud(Float32Array.from([10, 0, 0, 14, 0, 0, 12, 2, 0, 12, -2, 0]));
    const { cloud: unit, centre, radius } = normaliseToUnitSphere(cloud);
    expectClose(centre, [12, 0, 0], { atol: 1e-12 });
    expectClose(radius, 2, { atol: 1e-12 });
    expectClose(unit.positions, [-1, 0, 0, 1, 0, 0, 0, 1, 0, 0, -1, 0], { atol: 1e-7 });
  });
  it('samplePart is deterministic per seed and keeps extents in file units', () => {
    const part = fromThree(new SphereGeometry(25, 32, 16), 'ball.stl');
    const a = samplePart(part, 256, 5);
    const b = samplePart(part, 256, 5);
    expect(Array.from(a.cloud.positions)).toEqual(Array.from(b.cloud.positions));
    expectClose(a.radius, 25, { rtol: 1e-6 });
    expectClose(a.diagonal, Math.sqrt(3) * 50, { rtol: 1e-3 });
    let maxR = 0;
    for (let i = 0; i < 256; i++)
      maxR = Math.max(
        maxR,
        Math.hypot(a.cloud.positions[i * 3], a.cloud.positions[i * 3 + 1], a.cloud.positions[i * 3 + 2]),
      );
    expect(maxR).toBeLessThanOrEqual(1 + 1e-6);
  });
});
