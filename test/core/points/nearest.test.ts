// The nearest point by kd-tree against the definition: a scan of every point (squared Euclidean distance, in
// double precision), and against kd-tree-javascript (a general-purpose library) through PointIndex.
import { describe, expect, it } from 'vitest';
import { PointIndex } from '../../../src/core/points/kdtree';
import { NearestPoint } from '../../../src/core/points/nearest';
import { createRng } from '../../../src/core/rng';

function scan(points: Float32Array, x: number, y: number, z: number): number {
  let best = Infinity;
  for (let i = 0; i < points.length; i += 3) {
    const dx = x - points[i],
      dy = y - points[i + 1],
      dz = z - points[i + 2];
    best = Math.min(best, dx * dx + dy * dy + dz * dz);
  }
  return best;
}

describe('NearestPoint', () => {
  const rng = createRng(11);
  const clouds: [string, Float32Array][] = [
    ['2,048 points in a cube', Float32Array.from({ length: 2048 * 3 }, () => rng.next() * 2 - 1)],
    [
      'points on a line, many repeated',
      Float32Array.from({ length: 600 * 3 }, (_, i) => (i % 3 === 0 ? rng.int(20) / 20 : 0)),
    ],
    ['one point', Float32Array.of(0.25, -0.5, 1)],
    ['nine points, all the same', new Float32Array(27).fill(0.3)],
    [
      'a flat square grid',
      Float32Array.from({ length: 32 * 32 * 3 }, (_, i) =>
        i % 3 === 2 ? 0 : i % 3 === 0 ? Math.floor(i / 3 / 32) / 31 : ((i / 3) % 32) / 31,
      ),
    ],
  ];
  for (const [name, points] of clouds) {
    it(`${name}: the same squared distance as a scan of every point, from inside and far outside`, () => {
      const tree = new NearestPoint(points);
      for (let q = 0; q < 400; q++) {
        const far = q % 4 === 0 ? 10 : 1.2;
        const [x, y, z] = [(rng.next() * 2 - 1) * far, (rng.next() * 2 - 1) * far, (rng.next() * 2 - 1) * far];
        expect(tree.distanceSq(x, y, z)).toBe(scan(points, x, y, z));
      }
      // each point finds itself
      for (let i = 0; i < points.length; i += 3 * 7)
        expect(tree.distanceSq(points[i], points[i + 1], points[i + 2])).toBe(0);
    });
  }

  it('agrees with kd-tree-javascript (PointIndex) on 2,000 queries', () => {
    const points = clouds[0][1];
    const ours = new NearestPoint(points);
    const theirs = new PointIndex(points);
    for (let q = 0; q < 2000; q++) {
      const [x, y, z] = [rng.next() * 2 - 1, rng.next() * 2 - 1, rng.next() * 2 - 1];
      expect(ours.distanceSq(x, y, z)).toBeCloseTo(theirs.nearestDistanceSq(x, y, z), 15);
    }
  });

  it('refuses an empty or ragged array', () => {
    expect(() => new NearestPoint(new Float32Array(0))).toThrow(RangeError);
    expect(() => new NearestPoint(new Float32Array(4))).toThrow(RangeError);
  });
});
