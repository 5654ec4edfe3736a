// The trace reading behind the browser tests' bound on the page's own work (test/browser/page-cpu.ts): outermost
// tasks of the busiest renderer main thread, wall and thread CPU time. The event shapes are Chromium's Trace
// Event Format ("X" complete events with dur/tdur in µs, "M" thread_name metadata), as its trace viewer reads them.

import { describe, expect, it } from 'vitest';
import { longest, mainThreadTasks, mostCpu } from '../browser/page-cpu';

const meta = (pid: number, tid: number, name: string) => ({
  name: 'thread_name',
  ph: 'M',
  pid,
  tid,
  ts: 0,
  args: { name },
});
const task = (pid: number, tid: number, ts: number, dur: number, tdur: number) => ({
  name: 'ThreadControllerImpl::RunTask',
  ph: 'X',
  pid,
  tid,
  ts,
  dur,
  tdur,
});

describe('tasks of the page from a trace', () => {
  it('keeps the busiest renderer main thread, outermost tasks only, in ms', () => {
    const events = [
      meta(1, 1, 'CrRendererMain'),
      meta(1, 7, 'DedicatedWorker thread'),
      meta(2, 2, 'CrRendererMain'),
      task(1, 1, 1000, 80_000, 20_000), // a long wait for a core: 80 ms wall, 20 ms of the thread
      task(1, 1, 2000, 10_000, 9_000), // nested in the one before
      task(1, 1, 100_000, 5_000, 5_000),
      task(1, 1, 200_000, 60_000, 55_000),
      task(1, 7, 0, 900_000, 900_000), // a worker: not the page
      task(2, 2, 0, 300_000, 300_000), // another renderer with fewer tasks
      { name: 'RunTask', ph: 'X', pid: 1, tid: 1, ts: 300_000, dur: 70_000, tdur: 70_000 }, // another event name
    ];
    expect(mainThreadTasks(events)).toEqual([
      { wallMs: 80, cpuMs: 20 },
      { wallMs: 5, cpuMs: 5 },
      { wallMs: 60, cpuMs: 55 },
    ]);
    expect(longest(mainThreadTasks(events), 2)).toEqual(['80/20', '60/55']);
    expect(mostCpu(mainThreadTasks(events), 2)).toEqual(['60/55', '80/20']);
  });
});
