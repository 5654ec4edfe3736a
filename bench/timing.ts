// Benchmark timing: warm up, then the median of several repeats. Figures are for comparison within one run.

export interface Timing {
  readonly medianMs: number;
  readonly minMs: number;
  readonly repeats: number;
}

export function time(fn: () => void, { repeats = 7, warmup = 2 }: { repeats?: number; warmup?: number } = {}): Timing {
  for (let i = 0; i < warmup; i++) fn();
  const ms: number[] = [];
  for (let i = 0; i < repeats; i++) {
    const t0 = performance.now();
    fn();
    ms.push(performance.now() - t0);
  }
  ms.sort((a, b) => a - b);
  return { medianMs: ms[Math.floor(ms.length / 2)], minMs: ms[0], repeats };
}

export function report(section: string, rows: [string, string][]): void {
  console.log(`\n## ${section}`);
  const width = Math.max(...rows.map(([k]) => k.length));
  for (const [k, v] of rows) console.log(`  ${k.padEnd(width)}  ${v}`);
}

export const fmt = (x: number, digits = 1): string =>
  x.toLocaleString('en-GB', { maximumFractionDigits: digits, minimumFractionDigits: digits });
