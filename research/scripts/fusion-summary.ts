// Mean ± sd over seeds of research/scripts/fusion.ts lines, per library, encoder and grid share, ordered through
// the library; then the mean over the libraries.
//   npx tsx research/scripts/fusion-summary.ts fusion-*.jsonl
import { readFileSync } from 'node:fs';

interface Line {
  lib: string;
  seed: number;
  encoder: string;
  w: number;
  library: { nn: number; ft: number; map: number };
  cosine: { nn: number; ft: number; map: number };
}
const lines: Line[] = process.argv
  .slice(2)
  .flatMap((f) => readFileSync(f, 'utf8').split('\n').filter(Boolean))
  .map((l) => JSON.parse(l) as Line);
const groups = new Map<string, Line[]>();
for (const l of lines) {
  const key = `${l.lib.split('/').filter(Boolean).pop()}|${l.encoder}|${l.w}`;
  groups.set(key, [...(groups.get(key) ?? []), l]);
}
const stat = (xs: number[]) => {
  const m = xs.reduce((a, b) => a + b, 0) / xs.length;
  const sd = xs.length > 1 ? Math.sqrt(xs.reduce((a, b) => a + (b - m) ** 2, 0) / (xs.length - 1)) : 0;
  return { m, sd };
};
const fmt = (xs: number[]) => {
  const { m, sd } = stat(xs);
  return `${m.toFixed(3)} ± ${sd.toFixed(3)}`;
};
console.log('| library | encoder | grid share | seeds | NN | first tier | mAP |');
console.log('| --- | --- | --- | --- | --- | --- | --- |');
const means = new Map<string, { nn: number[]; map: number[]; libs: string[] }>();
for (const [key, ls] of [...groups].sort()) {
  const [lib, encoder, w] = key.split('|');
  console.log(
    `| ${lib} | ${encoder} | ${w} | ${ls.map((l) => l.seed).join(',')} | ${fmt(ls.map((l) => l.library.nn))} | ${fmt(ls.map((l) => l.library.ft))} | ${fmt(ls.map((l) => l.library.map))} |`,
  );
  const k2 = `${encoder}|${w}`;
  const e = means.get(k2) ?? { nn: [], map: [], libs: [] };
  e.nn.push(stat(ls.map((l) => l.library.nn)).m);
  e.map.push(stat(ls.map((l) => l.library.map)).m);
  e.libs.push(lib);
  means.set(k2, e);
}
console.log('\n| encoder | grid share | libraries | mean NN | mean mAP |');
console.log('| --- | --- | --- | --- | --- |');
for (const [k, e] of [...means].sort()) {
  const [encoder, w] = k.split('|');
  console.log(
    `| ${encoder} | ${w} | ${e.libs.join(', ')} | ${stat(e.nn).m.toFixed(3)} | ${stat(e.map).m.toFixed(3)} |`,
  );
}
