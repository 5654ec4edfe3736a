// A small library part for the page-side tests: one triangle's mesh and a two-point pool.

import type { LibraryPart } from '../../src/core/library';

export function fakePart(name: string): LibraryPart {
  return {
    name,
    label: name.split('/')[0],
    points: Float32Array.from([0, 0, 0, 1, 0, 0]),
    normals: Float32Array.from([0, 0, 1, 0, 0, 1]),
    meshPositions: Float32Array.from([0, 0, 0, 1, 0, 0, 0, 1, 0]),
    meshIndices: Uint32Array.from([0, 1, 2]),
    centre: [0, 0, 0],
    radius: 1,
    diagonal: 1.5,
  } as unknown as LibraryPart;
}
