// Turn experiment JSON lines (research/experiment.ts output, one run per line) into markdown table rows:
// runs with the same overrides, inputs, retrieval, points and steps apart from the seed are grouped, and each metric is given as mean ± standard
// deviation over the seeds (sample standard deviation, n − 1).
//   npx tsx research/summarise.ts runs-*.jsonl
import { readFileSync } from 'node:fs';

interface Run {
  overrides: Record<string, unknown> & { seed?: number };
  inputs?: string;
  retrieval?: string;
  embedPoints?: number;
  steps?: number;
  seconds: number;
  init?: string;
  learned: Record<string, number>;
  untrained: Record<string, number>;
  d2: Record<string, number>;
  beforeFineTune?: Record<string, number>;
  /** The same methods ordered through the library (runs since the diffusion ordering). */
  diffused?: { learned: Record<string, number> };
  /** Since the 32-neighbour defaults: the EdgeConv k and the scale step's strength (part of the grouping key). */
  edge?: number;
  scale?: number;
  /** Since retrieval averages over resamplings: how many (absent: 1). */
  resamplings?: number;
  /** Since the pose follows the library: the pose used (absent: principal axes, or as in the overrides). */
  pose?: string;
}

const runs: Run[] = process.argv.slice(2).flatMap((f) =>
  readFileSync(f, 'utf8')
    .split('\n')
    .filter((l) => l.startsWith('{'))
    .map((l) => JSON.parse(l) as Run),
);
const groups = new Map<string, Run[]>();
for (const r of runs) {
  const { seed: _seed, ...rest } = r.overrides;
  // Runs before the inputs rule carry no `inputs` (they used normals); before the retrieval change, no `retrieval` (pooled).
  // Defaults changed over time, so the points a view and the steps taken are part of the key too.
  const key = `${JSON.stringify(rest)} inputs ${r.inputs ?? 'xyz+normal'} retrieval ${r.retrieval ?? 'pooled'} points ${r.embedPoints ?? 512} steps ${r.steps ?? '?'}${r.init ? ` init ${r.init}` : ''}${r.edge !== undefined ? ` edge k ${r.edge} scale ${r.scale}` : ''}${(r.resamplings ?? 1) > 1 ? ` resamplings ${r.resamplings}` : ''}${r.pose && r.pose !== 'principal-axes' && !('pose' in rest) ? ` pose ${r.pose}` : ''}`;
  groups.set(key, [...(groups.get(key) ?? []), r]);
}
const stat = (xs: number[]) => {
  const m = xs.reduce((a, b) => a + b, 0) / xs.length;
  const sd = xs.length > 1 ? Math.sqrt(xs.reduce((a, b) => a + (b - m) ** 2, 0) / (xs.length - 1)) : 0;
  return `${m.toFixed(3)} ± ${sd.toFixed(3)}`;
};
const cell = (rs: Run[], method: 'learned' | 'untrained' | 'd2') =>
  ['nn', 'first_tier', 'map'].map((k) => stat(rs.map((r) => r[method][k]))).join(' / ');
const diffusedCell = (rs: Run[]) =>
  rs.every((r) => r.diffused)
    ? ['nn', 'first_tier', 'map'].map((k) => stat(rs.map((r) => r.diffused!.learned[k]))).join(' / ')
    : '—';
console.log(
  '| overrides | seeds | learned NN / 1st tier / mAP | learned, through the library | untrained | D2 | seconds |',
);
console.log('| --- | --- | --- | --- | --- | --- | --- |');
for (const [key, rs] of groups) {
  const seeds = rs.map((r) => r.overrides.seed ?? 0).join(',');
  console.log(
    `| \`${key}\` | ${seeds} | ${cell(rs, 'learned')} | ${diffusedCell(rs)} | ${cell(rs, 'untrained')} | ${cell(rs, 'd2')} | ${Math.round(rs.reduce((a, r) => a + r.seconds, 0) / rs.length)} |`,
  );
}
