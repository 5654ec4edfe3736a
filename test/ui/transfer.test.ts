// Parts handed to a worker as copies whose buffers are transferred (library-db.ts), checked with the platform's
// own structured clone (HTML Living Standard, StructuredSerializeWithTransfer): the receiver gets the values, the
// page keeps its part whole.

import { describe, expect, it } from 'vitest';
import { partBuffers, withOwnArrays } from '../../src/ui/controllers/library-db';
import { fakePart } from './fake-part';

const part = fakePart('washer/BC01-100A.stl');

describe('a part handed over rather than cloned', () => {
  it('the copy has the same values in buffers of its own', () => {
    const copy = withOwnArrays(part);
    expect(copy.name).toBe(part.name);
    for (const k of ['points', 'normals', 'meshPositions', 'meshIndices'] as const) {
      expect(Array.from(copy[k])).toEqual(Array.from(part[k]));
      expect(copy[k].buffer).not.toBe(part[k].buffer);
    }
    expect(partBuffers(copy)).toHaveLength(4);
  });

  it('transferring the copy delivers its values and leaves the original whole', () => {
    const copy = withOwnArrays(part);
    const received = structuredClone(copy, { transfer: partBuffers(copy) });
    expect(Array.from(received.meshIndices)).toEqual([0, 1, 2]);
    expect(Array.from(received.points)).toEqual([0, 0, 0, 1, 0, 0]);
    expect(copy.points.length).toBe(0); // the copy's buffers moved (detached)
    expect(Array.from(part.points)).toEqual([0, 0, 0, 1, 0, 0]);
  });
});
