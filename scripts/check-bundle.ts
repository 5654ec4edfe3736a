// After `npm run build`: the workbench's page must not carry tfjs (only the training worker needs it).
// Follows every JavaScript chunk the page's entry reaches (static and dynamic imports; worker files excepted,
// since they load in their own thread) and looks for strings only tfjs's code contains. Prints the sizes.
//   npx tsx scripts/check-bundle.ts [dist]

import { existsSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';

const dist = process.argv[2] ?? 'dist';
const TFJS_MARKERS = ['tfjsflags', 'FusedMatMul', 'setWasmPaths'];
const isWorker = (name: string) => /\.worker-[\w-]+\.js$/.test(name);

const html = readFileSync(join(dist, 'index.html'), 'utf8');
const entries = [...html.matchAll(/(?:src|href)="\.?\/?assets\/([\w.-]+\.js)"/g)].map((m) => m[1]);
if (entries.length === 0) throw new Error(`${dist}/index.html names no script`);

const seen = new Set<string>();
const workers = new Set<string>();
const queue = [...entries];
while (queue.length) {
  const name = queue.pop()!;
  if (seen.has(name)) continue;
  seen.add(name);
  const code = readFileSync(join(dist, 'assets', name), 'utf8');
  for (const m of code.matchAll(/["'`](?:\.{0,2}\/)*(?:assets\/)?([\w.-]+\.js)["'`]/g)) {
    const ref = m[1];
    if (!existsSync(join(dist, 'assets', ref))) continue;
    if (isWorker(ref)) workers.add(ref);
    else queue.push(ref);
  }
}

const kb = (name: string) => (statSync(join(dist, 'assets', name)).size / 1024).toFixed(1);
let failed = false;
for (const name of seen) {
  const code = readFileSync(join(dist, 'assets', name), 'utf8');
  const found = TFJS_MARKERS.filter((m) => code.includes(m));
  console.log(`page chunk  ${name}  ${kb(name)} KiB${found.length ? `  CARRIES tfjs (${found.join(', ')})` : ''}`);
  if (found.length) failed = true;
}
for (const name of workers) {
  const code = readFileSync(join(dist, 'assets', name), 'utf8');
  const tf = TFJS_MARKERS.some((m) => code.includes(m));
  console.log(`worker      ${name}  ${kb(name)} KiB${tf ? '  (tfjs)' : ''}`);
}
if (
  ![...workers].some((name) => TFJS_MARKERS.some((m) => readFileSync(join(dist, 'assets', name), 'utf8').includes(m)))
) {
  console.error(
    'no worker carries tfjs: the markers no longer match the tfjs build, so this check proves nothing; update TFJS_MARKERS',
  );
  process.exit(1);
}
if (failed) {
  console.error('the page bundle carries tfjs: a page module imports a module that imports @tensorflow/tfjs');
  process.exit(1);
}
console.log('the page carries no tfjs');
