// A part's mesh leaves the page once the part is written to the database, and comes back
// from the database when a view asks (meshes.ts). The database worker is stood in for by a fake that holds meshes
// by name and answers 'load-meshes'.

import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { fakeDbWorker } from './fake-db';
import { fakePart } from './fake-part';

const held = new Map<string, { positions: Float32Array; indices: Uint32Array }>();
const asked: string[][] = [];

const FakeWorker = fakeDbWorker('load-meshes', held, asked);

const part = fakePart;

beforeAll(() => vi.stubGlobal('Worker', FakeWorker));
afterAll(() => vi.unstubAllGlobals());

describe('meshes on the page', () => {
  it('a mesh goes once its part is written; the part stays the same object', async () => {
    const m = await import('../../src/ui/controllers/meshes');
    const p = part('washer/written.stl');
    const positions = p.meshPositions;
    expect(m.meshAway(p)).toBe(false);
    expect(m.meshNow(p)!.positions).toBe(positions); // its own arrays, not a copy
    m.markWritten(p);
    expect(m.meshAway(p)).toBe(true);
    expect(p.meshPositions.length).toBe(0);
    expect(p.meshIndices.length).toBe(0);
    expect(m.meshNow(p)).toBeNull();
  });

  it('a mesh that went is fetched from the database once, then kept among the recent ones', async () => {
    const m = await import('../../src/ui/controllers/meshes');
    const p = part('washer/w1.stl');
    const mesh = { positions: p.meshPositions.slice(), indices: p.meshIndices.slice() };
    held.set(p.name, mesh);
    m.markWritten(p);
    asked.length = 0;
    const back = await m.meshOf(p);
    expect(back.positions).toEqual(mesh.positions);
    expect(back.indices).toEqual(mesh.indices);
    expect(m.meshNow(p)).toBe(back);
    await m.meshOf(p);
    expect(asked).toEqual([[p.name]]);
    // A restored part (no mesh with it) is fetched the same way; a part the database lacks is an error naming it.
    const restored = part('washer/restored.stl');
    m.cameWithoutMesh(restored);
    await expect(m.meshOf(restored)).rejects.toThrow('washer/restored.stl');
  });

  it('keeps at most 16 fetched meshes, the oldest going first', async () => {
    const m = await import('../../src/ui/controllers/meshes');
    const parts = Array.from({ length: 20 }, (_, i) => part(`washer/r${i}.stl`));
    for (const p of parts) {
      held.set(p.name, { positions: p.meshPositions.slice(), indices: p.meshIndices.slice() });
      m.cameWithoutMesh(p);
    }
    for (const p of parts) await m.meshOf(p);
    expect(parts.filter((p) => m.meshNow(p) !== null).map((p) => p.name)).toEqual(parts.slice(4).map((p) => p.name));
  });
});
