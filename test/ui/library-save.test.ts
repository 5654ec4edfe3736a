// A long save keeps the library's list as it goes (library-db.ts `saveLibrary`): what a reload finds is every part
// written so far, in the library's order, never a part not yet written. The database worker is stood in for by a
// fake that answers each message and records it.

import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import type { LibraryPart } from '../../src/core/library';

interface Sent {
  type: string;
  names?: string[];
  parts?: { name: string }[];
}
const sent: Sent[] = [];

class FakeWorker {
  onmessage: ((e: { data: unknown }) => void) | null = null;
  onerror: ((e: { message: string }) => void) | null = null;
  postMessage(msg: Sent & { id: number }): void {
    sent.push({ type: msg.type, names: msg.names, parts: msg.parts?.map((p) => ({ name: p.name })) });
    setTimeout(() => this.onmessage?.({ data: { id: msg.id, ok: true, value: undefined } }), 0);
  }
}

const part = (i: number) =>
  ({
    name: `washer/p${i}.stl`,
    label: 'washer',
    points: new Float32Array(6),
    normals: new Float32Array(6),
    meshPositions: new Float32Array(9),
    meshIndices: Uint32Array.from([0, 1, 2]),
    centre: [0, 0, 0],
    radius: 1,
    diagonal: 1,
  }) as unknown as LibraryPart;

beforeAll(() => vi.stubGlobal('Worker', FakeWorker));
afterAll(() => vi.unstubAllGlobals());

describe('saving a library', () => {
  it('writes the list of the parts written so far between batches, then the whole list', async () => {
    const { saveLibrary } = await import('../../src/ui/controllers/library-db');
    const parts = Array.from({ length: 25 }, (_, i) => part(i));
    sent.length = 0;
    await saveLibrary({ parts, failures: [], source: 'user' }, 0);
    expect(sent.map((m) => m.type)).toEqual([
      'put-parts',
      'set-contents',
      'put-parts',
      'set-contents',
      'put-parts',
      'set-contents',
    ]);
    const written: string[] = [];
    for (const m of sent) {
      if (m.type === 'put-parts') written.push(...m.parts!.map((p) => p.name));
      else expect(m.names).toEqual(written); // only parts already written, in the library's order
    }
    expect(sent.at(-1)!.names).toEqual(parts.map((p) => p.name));
    // Saved again: nothing to write, the list alone.
    sent.length = 0;
    await saveLibrary({ parts, failures: [], source: 'user' }, 0);
    expect(sent.map((m) => m.type)).toEqual(['set-contents']);
  });

  it('a quick save writes the list once, at the end', async () => {
    const { saveLibrary } = await import('../../src/ui/controllers/library-db');
    sent.length = 0;
    await saveLibrary({ parts: Array.from({ length: 25 }, (_, i) => part(100 + i)), failures: [], source: 'user' });
    expect(sent.map((m) => m.type)).toEqual(['put-parts', 'put-parts', 'put-parts', 'set-contents']);
  });
});
