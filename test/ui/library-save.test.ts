// A long save keeps the library's list as it goes (library-db.ts `saveLibrary`): what a reload finds is every part
// written so far, in the library's order, never a part not yet written. The database worker is stood in for by a
// fake that answers each message and records it.

import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import type { LibraryPart } from '../../src/core/library';
import { fakePart } from './fake-part';

interface Sent {
  type: string;
  names?: string[];
  parts?: { name: string }[];
}
const sent: Sent[] = [];

/** Writes of parts with these names fail (a full disk, say). */
const failing = new Set<string>();

class FakeWorker {
  onmessage: ((e: { data: unknown }) => void) | null = null;
  onerror: ((e: { message: string }) => void) | null = null;
  postMessage(msg: Sent & { id: number }): void {
    const names = msg.parts?.map((p) => p.name) ?? [];
    if (names.some((n) => failing.has(n))) {
      setTimeout(() => this.onmessage?.({ data: { id: msg.id, ok: false, message: 'disk full' } }), 0);
      return;
    }
    sent.push({ type: msg.type, names: msg.names, parts: msg.parts?.map((p) => ({ name: p.name })) });
    setTimeout(() => this.onmessage?.({ data: { id: msg.id, ok: true, value: undefined } }), 0);
  }
}

/** Every list sent names only parts written before it, in order; returns the names written, in order. */
function checkLists(): string[] {
  const written: string[] = [];
  for (const m of sent) {
    if (m.type === 'put-parts') written.push(...m.parts!.map((p) => p.name));
    else expect(written).toEqual(expect.arrayContaining(m.names!));
  }
  return written;
}

const tick = () => new Promise((r) => setTimeout(r, 0));

const part = (i: number) => fakePart(`washer/p${i}.stl`);

beforeAll(() => vi.stubGlobal('Worker', FakeWorker));
afterAll(() => vi.unstubAllGlobals());

describe('saving a library', () => {
  it('writes the list of the parts written so far between batches, then the whole list', async () => {
    const { saveLibrary } = await import('../../src/ui/controllers/library-db');
    const parts = Array.from({ length: 25 }, (_, i) => part(i));
    sent.length = 0;
    await saveLibrary({ parts, failures: [], source: 'user' }, { listEveryMs: 0 });
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
    await saveLibrary({ parts, failures: [], source: 'user' }, { listEveryMs: 0 });
    expect(sent.map((m) => m.type)).toEqual(['set-contents']);
  });

  it('a quick save writes the list once, at the end', async () => {
    const { saveLibrary } = await import('../../src/ui/controllers/library-db');
    sent.length = 0;
    await saveLibrary({ parts: Array.from({ length: 25 }, (_, i) => part(100 + i)), failures: [], source: 'user' });
    expect(sent.map((m) => m.type)).toEqual(['put-parts', 'put-parts', 'put-parts', 'set-contents']);
  });

  it('a library that grows while it is saved is written as it grows, and listed in full by the last save', async () => {
    const { saveLibrary } = await import('../../src/ui/controllers/library-db');
    sent.length = 0;
    const growing = { parts: [] as LibraryPart[], failures: [], source: 'user' as const };
    const interim = { interim: true, listEveryMs: 0 };
    for (let round = 0; round < 4; round++) {
      for (let i = 0; i < 7; i++) growing.parts.push(part(200 + round * 7 + i));
      void saveLibrary(growing, interim);
      await tick();
    }
    const written: number[] = [];
    await saveLibrary(growing, { listEveryMs: 0, onWritten: (done) => written.push(done) });
    const names = growing.parts.map((p) => p.name);
    expect(checkLists()).toEqual(names); // each part once, in the library's order
    expect(sent.at(-1)).toMatchObject({ type: 'set-contents', names });
    expect(written.at(-1)).toBe(names.length);
    for (let i = 1; i < written.length; i++) expect(written[i]).toBeGreaterThan(written[i - 1]);
  });

  it('a newer save takes over between writes: the older library is not written on, the newer one is kept', async () => {
    const { saveLibrary } = await import('../../src/ui/controllers/library-db');
    sent.length = 0;
    const older = Array.from({ length: 40 }, (_, i) => part(300 + i));
    const first = saveLibrary({ parts: older, failures: [], source: 'user' });
    await tick(); // its first write is under way
    const kept = [part(400), part(401)];
    const second = saveLibrary({ parts: kept, failures: [], source: 'user' });
    await Promise.all([first, second]);
    const written = checkLists();
    expect(written.length).toBeLessThan(older.length + kept.length); // the older library was left part-written
    expect(written.slice(-2)).toEqual(kept.map((p) => p.name));
    expect(sent.filter((m) => m.type === 'set-contents').map((m) => m.names)).toEqual([kept.map((p) => p.name)]);
    // A save handed over while the writer writes its closing list is written too.
    sent.length = 0;
    const third = saveLibrary({ parts: [part(402)], failures: [], source: 'user' });
    while (!sent.some((m) => m.type === 'set-contents')) await tick();
    const last = [part(403)];
    await Promise.all([third, saveLibrary({ parts: last, failures: [], source: 'user' })]);
    expect(sent.at(-1)).toMatchObject({ type: 'set-contents', names: [last[0].name] });
  });

  it('a write that fails rejects the save, and the next save starts a writer of its own', async () => {
    const { saveLibrary } = await import('../../src/ui/controllers/library-db');
    sent.length = 0;
    const bad = part(500);
    failing.add(bad.name);
    await expect(saveLibrary({ parts: [bad], failures: [], source: 'user' })).rejects.toThrow('disk full');
    failing.clear();
    const good = [part(501)];
    await saveLibrary({ parts: good, failures: [], source: 'user' });
    expect(sent.map((m) => m.type)).toEqual(['put-parts', 'set-contents']);
    expect(sent.at(-1)!.names).toEqual([good[0].name]);
  });
});
