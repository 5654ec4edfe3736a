// The page's side of the training worker (ui/controllers/train-client.ts): a run's clouds (and a measurement's)
// are read and go over a chunk at a time before its start, and a model goes over once for all the chunks of a
// library's embedding. The worker is
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

/** A source over `parts` that records the ranges read and hands out copies (as clouds.ts does). */
function sourceOf(parts: { points: Float32Array; normals: Float32Array }[]) {
  const reads: [number, number][] = [];
  return {
    reads,
    source: {
      count: parts.length,
      read: async (from: number, to: number) => {
        reads.push([from, to]);
        return parts.slice(from, to).map((p) => ({ points: p.points.slice(), normals: p.normals.slice() }));
      },
    },
  };
}

describe('starting a training run', () => {
  it('reads the clouds and hands them over in chunks of at most 64, then starts without them', async () => {
    const { TrainClient } = await import('../../src/ui/controllers/train-client');
    const client = new TrainClient();
    const parts = Array.from({ length: 150 }, cloud);
    const { source, reads } = sourceOf(parts);
    const id = client.start(source, null, DEFAULT_TRAIN, { points: 2048, seed: 0 });
    for (let i = 0; i < 20 && !sent.some((s) => s.msg.type === 'start'); i++) await tick();
    const types = sent.map((s) => s.msg.type);
    expect(types).toEqual(['stage', 'stage', 'stage', 'start']);
    expect(reads).toEqual([
      [0, 64],
      [64, 128],
      [128, 150],
    ]);
    const staged = sent.filter((s) => s.msg.type === 'stage');
    expect(staged.map((s) => (s.msg as { parts: readonly unknown[] }).parts.length)).toEqual([64, 64, 22]);
    expect(sent.every((s) => s.msg.id === id)).toBe(true);
    for (const s of staged) {
      const chunk = (s.msg as { parts: readonly { points: Float32Array }[] }).parts;
      // What the source gave, handed over rather than cloned.
      expect(s.transfer.length).toBe(chunk.length * 2);
      expect(chunk.every((p) => s.transfer.includes(p.points.buffer))).toBe(true);
    }
    expect((sent[3].msg as { parts?: unknown }).parts).toBeUndefined();
  });

  it('a chunk that cannot be read ends the run with an error naming why, and it never starts', async () => {
    const { TrainClient } = await import('../../src/ui/controllers/train-client');
    const client = new TrainClient();
    const errors: string[] = [];
    client.on((m) => m.type === 'error' && errors.push(m.message));
    const source = {
      count: 100,
      read: async (from: number) => {
        if (from > 0) throw new Error('washer/w7.stl: its point cloud is not in the parts database');
        return [cloud()];
      },
    };
    client.start(source, null, DEFAULT_TRAIN, { points: 2048, seed: 0 });
    for (let i = 0; i < 20 && errors.length === 0; i++) await tick();
    expect(errors).toEqual(['washer/w7.stl: its point cloud is not in the parts database']);
    // The chunk handed over before the failure is dropped in the worker, under the run's id.
    expect(sent.map((s) => s.msg.type)).toEqual(['stage', 'unstage']);
    expect(new Set(sent.map((s) => s.msg.id)).size).toBe(1);
  });
});

describe('measuring on the whole library', () => {
  it('stages the clouds under the request id, then asks without them; a stop during the hand-over sends nothing more', async () => {
    const { TrainClient } = await import('../../src/ui/controllers/train-client');
    const client = new TrainClient();
    const { source } = sourceOf(Array.from({ length: 70 }, cloud));
    const asked = client.evaluate(source, [], new Float64Array(70), null, DEFAULT_TRAIN);
    for (let i = 0; i < 20 && !sent.some((s) => s.msg.type === 'evaluate'); i++) await tick();
    expect(sent.map((s) => s.msg.type)).toEqual(['stage', 'stage', 'evaluate']);
    expect(new Set(sent.map((s) => s.msg.id)).size).toBe(1);
    expect((sent[2].msg as { parts?: unknown }).parts).toBeUndefined();
    client.abort();
    await expect(asked).rejects.toThrow('cancelled');

    sent.length = 0;
    const study = client.study(sourceOf(Array.from({ length: 200 }, cloud)).source, [], null, DEFAULT_TRAIN, () => {});
    await tick();
    client.abort(); // after the first chunk
    await expect(study).rejects.toThrow('cancelled');
    expect(sent.map((s) => s.msg.type)).toEqual(['stage']);
  });

  it('a stop while the last chunk is being read sends nothing: the study never starts on the fresh worker', async () => {
    const { TrainClient } = await import('../../src/ui/controllers/train-client');
    const client = new TrainClient();
    let release: () => void = () => {};
    const parts = Array.from({ length: 30 }, cloud);
    const source = {
      count: parts.length,
      read: (from: number, to: number) =>
        new Promise<{ points: Float32Array; normals: Float32Array }[]>((resolve) => {
          release = () => resolve(parts.slice(from, to));
        }),
    };
    const study = client.study(source, [], null, DEFAULT_TRAIN, () => {});
    await tick();
    client.abort(); // the one chunk is still being read
    release();
    await expect(study).rejects.toThrow('cancelled');
    for (let i = 0; i < 5; i++) await tick();
    expect(sent.map((s) => s.msg.type)).toEqual([]);
  });

  it('a study with a second worker hands each worker one end of a channel, and ends the service when it stops', async () => {
    const { TrainClient } = await import('../../src/ui/controllers/train-client');
    const client = new TrainClient();
    const helper = new TrainClient();
    const study = client.study(sourceOf([cloud()]).source, [], null, DEFAULT_TRAIN, () => {}, {
      kinds: ['jitter'],
      helper,
    });
    for (let i = 0; i < 20 && !sent.some((s) => s.msg.type === 'study'); i++) await tick();
    const serve = sent.find((s) => s.msg.type === 'serve')!;
    const ask = sent.find((s) => s.msg.type === 'study')!;
    const port = (serve.msg as { port: MessagePort }).port;
    const other = (ask.msg as { helper: MessagePort }).helper;
    // Moved, not copied: a port can only be handed on in the transfer list.
    expect([serve.transfer.includes(port), ask.transfer.includes(other)]).toEqual([true, true]);
    expect((ask.msg as { kinds?: readonly string[] }).kinds).toEqual(['jitter']);
    // The two ends are one channel: what one worker sends, the other receives.
    const heard = new Promise((resolve) => (port.onmessage = (e) => resolve(e.data)));
    other.postMessage('hello');
    expect(await heard).toBe('hello');
    port.close();
    other.close();
    client.abort();
    await expect(study).rejects.toThrow('cancelled');
    const ended = sent.filter((s) => s.msg.type === 'cancel');
    expect(ended.map((s) => s.msg.id)).toEqual([serve.msg.id]);
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
