// Regenerates demo-shapes/ from the seed: `npm run demo:generate`. Writes only the generated files and
// removes stale ones, leaving README.md and LICENSE in place.

import { mkdirSync, readdirSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { dirname, join, relative } from 'node:path';
import { fileURLToPath } from 'node:url';
import { generateLibrary } from '../src/gen/library';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', 'demo-shapes');
const keep = new Set(['README.md', 'LICENSE']);
const { files, entries } = generateLibrary();
const wanted = new Set(files.map((f) => f.path));

function walk(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = join(dir, name);
    return statSync(p).isDirectory() ? walk(p) : [relative(root, p)];
  });
}
mkdirSync(root, { recursive: true });
for (const existing of walk(root)) if (!wanted.has(existing) && !keep.has(existing)) rmSync(join(root, existing));
let bytes = 0;
for (const f of files) {
  mkdirSync(dirname(join(root, f.path)), { recursive: true });
  writeFileSync(join(root, f.path), f.bytes);
  bytes += f.bytes.length;
}
console.log(
  `demo-shapes: ${entries.length} parts in ${new Set(entries.map((e) => e.family)).size} families, ${files.length} files, ${(bytes / 1e6).toFixed(2)} MB`,
);
