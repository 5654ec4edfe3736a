// The page's own work, task by task, from Chromium's trace: how long each task on the page's main thread took
// and how much of that the thread itself ran (its CPU time). The Long Tasks API sees only the first figure, which
// on a machine whose cores are shared with the workers also counts the time the page waited for a core.

import type { Page } from 'playwright-core';

export interface PageTask {
  /** Wall time of the task, ms. */
  readonly wallMs: number;
  /** CPU time of the page's thread in the task, ms. */
  readonly cpuMs: number;
}

interface TraceEvent {
  readonly name: string;
  readonly ph: string;
  readonly pid: number;
  readonly tid: number;
  readonly ts: number;
  readonly dur?: number;
  readonly tdur?: number;
  readonly args?: { name?: string };
}

/** The tasks of the busiest renderer main thread in a trace (the page under test), outermost only. */
export function mainThreadTasks(events: readonly TraceEvent[]): PageTask[] {
  const mains = new Set(
    events
      .filter((e) => e.ph === 'M' && e.name === 'thread_name' && e.args?.name === 'CrRendererMain')
      .map((e) => `${e.pid}:${e.tid}`),
  );
  const byThread = new Map<string, TraceEvent[]>();
  for (const e of events) {
    const key = `${e.pid}:${e.tid}`;
    if (e.ph !== 'X' || e.name !== 'ThreadControllerImpl::RunTask' || !mains.has(key)) continue;
    const list = byThread.get(key);
    if (list) list.push(e);
    else byThread.set(key, [e]);
  }
  const tasks = [...byThread.values()].sort((a, b) => b.length - a.length)[0] ?? [];
  tasks.sort((a, b) => a.ts - b.ts || (b.dur ?? 0) - (a.dur ?? 0));
  const out: PageTask[] = [];
  let end = -Infinity;
  for (const t of tasks) {
    if (t.ts < end) continue; // nested in the one before
    end = t.ts + (t.dur ?? 0);
    out.push({ wallMs: (t.dur ?? 0) / 1000, cpuMs: (t.tdur ?? 0) / 1000 });
  }
  return out;
}

/** Starts tracing the page's tasks; the function returned stops and gives them. */
export async function tracePageTasks(page: Page): Promise<() => Promise<PageTask[]>> {
  const cdp = await page.context().newCDPSession(page);
  const events: TraceEvent[] = [];
  cdp.on('Tracing.dataCollected', (e) => events.push(...(e.value as unknown as TraceEvent[])));
  const complete = new Promise<void>((resolve) => cdp.on('Tracing.tracingComplete', () => resolve()));
  await cdp.send('Tracing.start', {
    traceConfig: { recordMode: 'recordAsMuchAsPossible', includedCategories: ['toplevel'] },
    transferMode: 'ReportEvents',
  });
  return async () => {
    await cdp.send('Tracing.end');
    await complete;
    await cdp.detach();
    return mainThreadTasks(events);
  };
}

const top = (tasks: readonly PageTask[], n: number, key: (t: PageTask) => number): string[] =>
  [...tasks]
    .sort((a, b) => key(b) - key(a))
    .slice(0, n)
    .map((t) => `${Math.round(t.wallMs)}/${Math.round(t.cpuMs)}`);
/** For a test's log, "wall/CPU" ms: the longest tasks by wall time. */
export const longest = (tasks: readonly PageTask[], n = 5): string[] => top(tasks, n, (t) => t.wallMs);
/** For a test's log, "wall/CPU" ms: the tasks with the most CPU time. */
export const mostCpu = (tasks: readonly PageTask[], n = 3): string[] => top(tasks, n, (t) => t.cpuMs);
