// A part's point cloud leaves the page once the part is written to the database, and comes back from the database
// when a job or a view needs it (ui/controllers/clouds.ts). The database worker is stood in for by a fake that holds
// clouds by name and answers 'load-clouds'.

import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import type { LibraryPart } from '../../src/core/library';
import { fakeDbWorker } from './fake-db';
import { fakePart } from './fake-part';

const held = new Map<string, { points: Float32Array; normals: Float32Array }>();
const asked: string[][] = [];

const FakeWorker = fakeDbWorker('load-clouds', held, asked);

/**
 * The eight corners of a 4 × 2 × 1 box turned 45° about z. Worked example: a w × h rectangle turned by θ has a
 * bounding rectangle (w cos θ + h sin θ) × (w sin θ + h cos θ), here 3√2 × 3√2, so the box in the file's axes is
 * 18 against the principal box's 8: ratio 2.25.
 */
function turnedBox(name: string): LibraryPart {
  const c = Math.SQRT1_2;
  const pts: number[] = [];
  for (const x of [-2, 2])
    for (const y of [-1, 1]) for (const z of [-0.5, 0.5]) pts.push(c * x - c * y, c * x + c * y, z);
  return { ...fakePart(name), points: Float32Array.from(pts), normals: new Float32Array(pts.length) };
}

beforeAll(() => vi.stubGlobal('Worker', FakeWorker));
afterAll(() => vi.unstubAllGlobals());

describe('point clouds on the page', () => {
  it('a cloud goes once its part is written, its box ratio worked out first; the part stays the same object', async () => {
    const c = await import('../../src/ui/controllers/clouds');
    const p = turnedBox('bracket/turned.step');
    const points = p.points;
    expect(c.cloudNow(p)!.points).toBe(points); // its own arrays, not a copy
    expect(c.cloudNow(p)).toBe(c.cloudNow(p)); // one object, so a view given it twice draws once
    expect(c.hasBoxRatio(p)).toBe(false);
    c.cloudWritten(p);
    expect(c.cloudAway(p)).toBe(true);
    expect(p.points.length).toBe(0);
    expect(p.normals.length).toBe(0);
    expect(c.cloudNow(p)).toBeNull();
    expect(c.boxRatioOf(p)).toBeCloseTo(2.25, 5);
  });

  it('a restored part carries the box ratio worked out by the database, and its cloud comes back on request', async () => {
    const c = await import('../../src/ui/controllers/clouds');
    const p = fakePart('washer/restored.stl');
    const cloud = { points: Float32Array.from([0.5, 0, 0]), normals: Float32Array.from([1, 0, 0]) };
    held.set(p.name, cloud);
    c.cameWithoutCloud(p, 1.7);
    expect(c.boxRatioOf(p)).toBe(1.7);
    asked.length = 0;
    const back = await c.cloudOf(p);
    expect(back.points).toEqual(cloud.points);
    expect(c.cloudNow(p)).toBe(back);
    await c.cloudOf(p);
    expect(asked).toEqual([[p.name]]); // fetched once, then kept among the recent ones
    const lost = fakePart('washer/lost.stl');
    c.cameWithoutCloud(lost, 1);
    await expect(c.cloudOf(lost)).rejects.toThrow('washer/lost.stl');
  });

  it('hands a job arrays it owns, in order: copies of the page’s, the rest fetched in one request', async () => {
    const c = await import('../../src/ui/controllers/clouds');
    const here = fakePart('washer/here.stl');
    const gone = [fakePart('washer/gone1.stl'), fakePart('washer/gone2.stl')];
    gone.forEach((p, i) => {
      held.set(p.name, { points: Float32Array.from([i, i, i]), normals: Float32Array.from([0, 0, 1]) });
      c.cameWithoutCloud(p, 1);
    });
    asked.length = 0;
    const out = await c.cloudsToHand([gone[0], here, gone[1]]);
    expect(asked).toEqual([['washer/gone1.stl', 'washer/gone2.stl']]);
    expect(out.map((a) => [...a.points])).toEqual([[0, 0, 0], [...here.points], [1, 1, 1]]);
    expect(out[1].points).not.toBe(here.points); // a copy: the page keeps its own
    const source = c.librarySource([here, ...gone]);
    expect(source.count).toBe(3);
    expect((await source.read(1, 3)).map((a) => a.points[0])).toEqual([0, 1]);
    // A part the database lacks stops the job with its name.
    const lost = fakePart('washer/lost2.stl');
    c.cameWithoutCloud(lost, 1);
    await expect(c.cloudsToHand([here, lost])).rejects.toThrow('washer/lost2.stl');
  });

  it('keeps at most 16 fetched clouds, the oldest going first', async () => {
    const c = await import('../../src/ui/controllers/clouds');
    const parts = Array.from({ length: 20 }, (_, i) => fakePart(`washer/r${i}.stl`));
    for (const p of parts) {
      held.set(p.name, { points: p.points.slice(), normals: p.normals.slice() });
      c.cameWithoutCloud(p, 1);
    }
    for (const p of parts) await c.cloudOf(p);
    expect(parts.filter((p) => c.cloudNow(p) !== null).map((p) => p.name)).toEqual(parts.slice(4).map((p) => p.name));
  });
});
