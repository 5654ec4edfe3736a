// Keeping the page's tasks short: long work on the page's own thread is cut into slices, and each slice ends by
// handing the thread back (a new task), so input and painting go on between them. The Long Tasks API calls any
// task over 50 ms long; slices of about 10 ms leave room for a frame around them (common practice).

import type { Steps } from '../core/steps';

/** Milliseconds of work a slice does before it hands the thread back. */
export const SLICE_MS = 10;

/** A new task: the page may paint and take input first (scheduler.yield where the browser has it). */
export function yieldToPage(): Promise<void> {
  const s = (globalThis as { scheduler?: { yield?: () => Promise<void> } }).scheduler;
  if (typeof s?.yield === 'function') return s.yield();
  return new Promise((resolve) => setTimeout(resolve, 0));
}

/**
 * Calls `fn` on each item in order, handing the thread back whenever a slice has run `budgetMs`; `stop` is asked
 * between slices (true: the rest is left undone). Resolves to the number of items done.
 */
export async function inSlices<T>(
  items: readonly T[],
  fn: (item: T, i: number) => void,
  budgetMs = SLICE_MS,
  stop: () => boolean = () => false,
): Promise<number> {
  let start = performance.now();
  for (let i = 0; i < items.length; i++) {
    if (performance.now() - start >= budgetMs) {
      await yieldToPage();
      if (stop()) return i;
      start = performance.now();
    }
    fn(items[i], i);
  }
  return items.length;
}

/** Values copied between checks of the clock in `copyInSlices` (1 MB of floats). */
const COPY_STEP = 2 ** 18;

/**
 * A copy of `source` made a slice at a time: copying into fresh memory costs about 12 ns a value on this machine
 * (page faults; measured in Node), so 20,000 embeddings of 1,024 values (80 MB) were a second in one task.
 */
export async function copyInSlices(source: Float32Array, budgetMs = SLICE_MS): Promise<Float32Array> {
  const out = new Float32Array(source.length);
  let start = performance.now();
  for (let i = 0; i < source.length; i += COPY_STEP) {
    if (performance.now() - start >= budgetMs) {
      await yieldToPage();
      start = performance.now();
    }
    out.set(source.subarray(i, Math.min(source.length, i + COPY_STEP)), i);
  }
  return out;
}

/**
 * Runs `steps` (core/steps.ts) to the end, a task each `budgetMs` of it; null, with the rest not run, when `stop`
 * says so after a wait.
 */
export async function stepThrough<T>(
  steps: Steps<T>,
  stop: () => boolean = () => false,
  budgetMs = SLICE_MS,
): Promise<T | null> {
  let start = performance.now();
  for (;;) {
    const r = steps.next();
    if (r.done) return r.value;
    if (performance.now() - start >= budgetMs) {
      await yieldToPage();
      if (stop()) {
        steps.return(undefined as never);
        return null;
      }
      start = performance.now();
    }
  }
}
