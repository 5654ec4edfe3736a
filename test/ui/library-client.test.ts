// The import workers' client (ui/controllers/library-client.ts) waits for its caller's `ready` before it starts
// each file, so reading can be held back while the parts read are written; results still come in file order. The
// workers are stood in for by fakes that answer each file at once.

import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { fakePart } from './fake-part';

/** Names of the files handed to a worker, in the order they were handed over. */
const started: string[] = [];

class FakeWorker {
  private readonly listeners = new Map<string, Set<(e: unknown) => void>>();
  addEventListener(type: string, fn: (e: unknown) => void): void {
    if (!this.listeners.has(type)) this.listeners.set(type, new Set());
    this.listeners.get(type)!.add(fn);
  }
  removeEventListener(type: string, fn: (e: unknown) => void): void {
    this.listeners.get(type)?.delete(fn);
  }
  postMessage(msg: { id: number; files: { name: string }[] }): void {
    const name = msg.files[0].name;
    started.push(name);
    const say = (data: unknown) => this.listeners.get('message')?.forEach((fn) => fn({ data }));
    setTimeout(() => {
      say({ type: 'reading', id: msg.id });
      say({ type: 'part', id: msg.id, part: fakePart(name) });
      say({ type: 'done', id: msg.id, ms: 1 });
    }, 0);
  }
  terminate(): void {}
}

beforeAll(() => vi.stubGlobal('Worker', FakeWorker));
afterAll(() => vi.unstubAllGlobals());

const tick = () => new Promise((r) => setTimeout(r, 0));

describe('holding reading back', () => {
  it('starts no file while `ready` waits, then reads on; parts arrive in file order', async () => {
    const { LibraryClient } = await import('../../src/ui/controllers/library-client');
    const client = new LibraryClient(2);
    const files = Array.from({ length: 8 }, (_, i) => ({ name: `washer/w${i}.stl`, bytes: new ArrayBuffer(8) }));
    const got: string[] = [];
    let open = true;
    const waiting: (() => void)[] = [];
    const ready = () => (open ? Promise.resolve() : new Promise<void>((r) => waiting.push(r)));
    const done = client.importFiles(
      files,
      { points: 64, seed: 0 },
      {
        onPart: (p) => {
          got.push(p.name);
          if (got.length === 3) open = false; // the caller falls behind after three parts
        },
        onFailure: () => {},
        onProgress: () => {},
        ready,
      },
    );
    for (let i = 0; i < 20; i++) await tick();
    // Two workers: at most one file each past the third part; nothing more until `ready` lets them go.
    const held = started.length;
    expect(held).toBeLessThanOrEqual(5);
    for (let i = 0; i < 20; i++) await tick();
    expect(started.length).toBe(held);
    expect(waiting.length).toBe(2); // both workers wait
    open = true;
    waiting.forEach((go) => go());
    await done;
    expect(got).toEqual(files.map((f) => f.name));
    expect(started.length).toBe(8);
  });
});
