// Slicing the page's work (src/ui/pace.ts). A "long task" is one over 50 ms (W3C Long Tasks API, §3); the slices
// are meant to stay well under it and to let other tasks run between them.

import { describe, expect, it } from 'vitest';
import { copyInSlices, inSlices, SLICE_MS, stepThrough, yieldToPage } from '../../src/ui/pace';
import type { Steps } from '../../src/core/steps';

/** Busy-waits `ms` (a slice of work that takes real time). */
const spin = (ms: number) => {
  const end = performance.now() + ms;
  while (performance.now() < end);
};

/** Counts the moments the thread comes free (a timer that runs whenever it can), until `stop`, which says how many. */
function freeMoments(): { stop: () => number } {
  let count = 0;
  let ticking = true;
  const tick = () => {
    count++;
    if (ticking) setTimeout(tick, 0);
  };
  setTimeout(tick, 0);
  return {
    stop: () => {
      ticking = false;
      return count;
    },
  };
}

describe('work in slices', () => {
  it('a slice is far below the 50 ms of a long task', () => {
    expect(SLICE_MS).toBeLessThanOrEqual(50 / 4);
  });

  it('yieldToPage lets a task queued before it run first', async () => {
    const order: string[] = [];
    setTimeout(() => order.push('other task'), 0);
    await yieldToPage();
    order.push('after the yield');
    expect(order).toEqual(['other task', 'after the yield']);
  });

  it('does every item once, in order, and hands the thread back between slices', async () => {
    const done: number[] = [];
    const between: number[] = [];
    // A timer that fires whenever the thread is free: it can only run between slices.
    let ticking = true;
    const tick = () => {
      between.push(done.length);
      if (ticking) setTimeout(tick, 0);
    };
    setTimeout(tick, 0);
    const n = await inSlices(
      Array.from({ length: 12 }, (_, i) => i),
      (x) => {
        spin(2);
        done.push(x);
      },
      5,
    );
    ticking = false;
    expect(n).toBe(12);
    expect(done).toEqual([...Array(12).keys()]);
    // 12 items of 2 ms in slices of 5 ms: the thread came free at least three times with work still to do.
    expect(between.filter((k) => k > 0 && k < 12).length).toBeGreaterThanOrEqual(3);
    // and no slice ran more than its budget plus one item (5 + 2 ms) between two of those moments
    const gaps = between.slice(1).map((k, i) => k - between[i]);
    expect(Math.max(...gaps)).toBeLessThanOrEqual(4);
  });

  it('stops between slices when asked, and says how many were done', async () => {
    const done: number[] = [];
    const n = await inSlices(
      Array.from({ length: 20 }, (_, i) => i),
      (x) => {
        spin(2);
        done.push(x);
      },
      3,
      () => done.length >= 4,
    );
    expect(n).toBe(done.length);
    expect(n).toBeGreaterThanOrEqual(4);
    expect(n).toBeLessThan(20);
  });

  it('runs a computation written in steps to its result, handing the thread back between slices, or stops it', async () => {
    let ran = 0;
    let closed: boolean | undefined;
    function* work(n: number): Steps<number> {
      try {
        let sum = 0;
        for (let i = 1; i <= n; i++) {
          spin(2);
          sum += i;
          ran++;
          yield;
        }
        return sum;
      } finally {
        closed = true;
      }
    }
    const free = freeMoments();
    // 10 steps of 2 ms in slices of 5 ms: 1 + 2 + … + 10 = 55, with the thread free at least twice on the way.
    expect(await stepThrough(work(10), () => false, 5)).toBe(55);
    expect(free.stop()).toBeGreaterThanOrEqual(2);
    ran = 0;
    closed = false;
    expect(await stepThrough(work(100), () => ran >= 6, 3)).toBeNull();
    expect(ran).toBeGreaterThanOrEqual(6);
    expect(ran).toBeLessThan(100);
    expect(closed).toBe(true); // the generator was ended, not left hanging
  });

  it('copies a long array exactly, handing the thread back between slices', async () => {
    const source = Float32Array.from({ length: 3 * 2 ** 18 + 5 }, (_, i) => Math.sin(i));
    const free = freeMoments();
    // A zero budget: every 1 MB step is a task of its own (four of them here).
    const copy = await copyInSlices(source, 0);
    const between = free.stop();
    expect(copy).not.toBe(source);
    expect(copy).toEqual(source);
    expect(between).toBeGreaterThanOrEqual(3);
    expect(await copyInSlices(new Float32Array(0))).toEqual(new Float32Array(0));
  });
});
