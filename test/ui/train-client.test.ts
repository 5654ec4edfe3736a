// The page's side of the training worker (ui/controllers/train-client.ts): a run's clouds go over a chunk at a
// time before its start, and a model goes over once for all the chunks of a library's embedding. The worker is
// stood in for by a fake that records what it is sent and answers embedding requests.

import { afterAll, beforeAll, beforeEach, describe, expect, it, vi } from 'vitest';
import { DEFAULT_TRAIN } from '../../src/core/model/defaults';
import type { CheckpointMessage, TrainRequest } from '../../src/worker/protocol';

const sent: { msg: TrainRequest; transfer: Transferable[] }[] = [];
/** Embedding requests without a model fail while this is set (a worker that lost what it kept). */
let failEmbeds = false;

class FakeWorker {
  onmessage: ((e: { data: unknown }) => void) | null = null;
  onerror: ((e: { message: string }) => void) | null = null;
  postMessage(msg: TrainRequest, transfer: Transferable[] = []): void {
    sent.push({ msg, transfer });
    if (msg.type !== 'embed') return;
    const reply = failEmbeds
      ? { type: 'error', id: msg.id, message: 'no model' }
      : { type: 'embeddings', id: msg.id, vectors: new Float32Array(msg.parts.length * 2), dim: 2, learned: true };
    setTimeout(() => this.onmessage?.({ data: reply }), 0);
  }
  terminate(): void {}
}

const cloud = () => ({ points: new Float32Array(2048 * 3), normals: new Float32Array(2048 * 3) });
const model = (): CheckpointMessage =>
  ({ manifest: { config: DEFAULT_TRAIN }, weightData: new ArrayBuffer(64) }) as unknown as CheckpointMessage;
const tick = () => new Promise((r) => setTimeout(r, 0));

beforeAll(() => vi.stubGlobal('Worker', FakeWorker));
afterAll(() => vi.unstubAllGlobals());
beforeEach(() => {
  sent.length = 0;
  failEmbeds = false;
});

describe('starting a training run', () => {
  it('hands the clouds over in chunks of at most 64, each copied and handed over, then starts without them', async () => {
    const { TrainClient } = await import('../../src/ui/controllers/train-client');
    const client = new TrainClient();
    const parts = Array.from({ length: 150 }, cloud);
    const id = client.start(parts, null, DEFAULT_TRAIN, { points: 2048, seed: 0 });
    for (let i = 0; i < 10 && !sent.some((s) => s.msg.type === 'start'); i++) await tick();
    const types = sent.map((s) => s.msg.type);
    expect(types).toEqual(['stage', 'stage', 'stage', 'start']);
    const staged = sent.filter((s) => s.msg.type === 'stage');
    expect(staged.map((s) => (s.msg as { parts: readonly unknown[] }).parts.length)).toEqual([64, 64, 22]);
    expect(sent.every((s) => s.msg.id === id)).toBe(true);
    for (const s of staged) {
      const chunk = (s.msg as { parts: readonly { points: Float32Array }[] }).parts;
      // Copies, handed over (the page keeps its own clouds).
      expect(chunk.every((p) => !parts.some((q) => q.points === p.points))).toBe(true);
      expect(s.transfer.length).toBe(chunk.length * 2);
    }
    expect((sent[3].msg as { parts?: unknown }).parts).toBeUndefined();
  });
});

describe('embedding a library in chunks', () => {
  it('carries the model with the first chunk only, and again after a failure or for a new model', async () => {
    const { TrainClient } = await import('../../src/ui/controllers/train-client');
    const client = new TrainClient();
    const m = model();
    const chunk = [cloud(), cloud()];
    await client.embed(chunk, m, DEFAULT_TRAIN);
    await client.embed(chunk, m, DEFAULT_TRAIN);
    await client.embed(chunk, m, DEFAULT_TRAIN);
    const carried = () =>
      sent.filter((s) => s.msg.type === 'embed').map((s) => (s.msg as { checkpoint: unknown }).checkpoint !== null);
    expect(carried()).toEqual([true, false, false]);
    const keys = sent.map((s) => (s.msg as { modelKey?: number }).modelKey);
    expect(new Set(keys).size).toBe(1);
    expect(keys[0]).toBeGreaterThan(0);
    // The first request's weights are a copy, handed over: the page's model keeps its own.
    expect((sent[0].msg as { checkpoint: CheckpointMessage }).checkpoint.weightData).not.toBe(m.weightData);
    // A failed request: the next one carries the model again.
    failEmbeds = true;
    await expect(client.embed(chunk, m, DEFAULT_TRAIN)).rejects.toThrow('no model');
    failEmbeds = false;
    await client.embed(chunk, m, DEFAULT_TRAIN);
    expect(carried()).toEqual([true, false, false, false, true]);
    // A new model object (a new checkpoint) goes over under a new key.
    await client.embed(chunk, model(), DEFAULT_TRAIN);
    expect(carried().at(-1)).toBe(true);
    expect((sent.at(-1)!.msg as { modelKey: number }).modelKey).not.toBe(keys[0]);
    // Without a model (untrained encoders) nothing is carried and no key is named.
    await client.embed(chunk, null, DEFAULT_TRAIN);
    expect(carried().at(-1)).toBe(false);
    expect((sent.at(-1)!.msg as { modelKey?: number }).modelKey).toBeUndefined();
  });
});
