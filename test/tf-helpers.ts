// tfjs test helpers: backend set-up once per file, and a leak guard for every tensor test.

import * as tf from '@tensorflow/tfjs';
import { afterEach, beforeEach, expect } from 'vitest';
import { initBackend, type BackendName } from '../src/core/model/backend';

export async function useBackend(prefer: BackendName = 'wasm'): Promise<BackendName> {
  return initBackend({ prefer });
}

/** Runs fn and fails if it leaves tensors behind. */
export async function expectNoLeak<T>(fn: () => T | Promise<T>): Promise<T> {
  const before = tf.memory().numTensors;
  const out = await fn();
  expect(tf.memory().numTensors, 'tensors leaked').toBe(before);
  return out;
}

/**
 * Every test of the calling file must end with as many tensors as it started with: call once at the top of a
 * file whose tests touch tfjs (encoders, training, embedding, the command line in-process).
 */
export function guardTensorLeaks(): void {
  // Tests that run before any backend is set (pure-JS parts of a file) hold no tensors.
  const count = () => (tf.engine().backendName ? tf.memory().numTensors : 0);
  let before = 0;
  beforeEach(() => {
    before = count();
  });
  afterEach((ctx) => {
    const now = count();
    expect(now - before, `${ctx.task.name}: tensors leaked`).toBe(0);
  });
}

/**
 * Tensors a test makes as fixed inputs, disposed after each test (before the leak guard counts): call once at the
 * top of a file, after guardTensorLeaks(), and pass inputs through the returned function.
 */
export function disposedAfterEach(): <T extends tf.Tensor | tf.Tensor[]>(t: T) => T {
  const made: tf.Tensor[] = [];
  afterEach(() => {
    tf.dispose(made.splice(0));
  });
  return (t) => {
    made.push(...(Array.isArray(t) ? t : [t]));
    return t;
  };
}
