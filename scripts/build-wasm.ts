// `npm run build:wasm`: assembles src/core/model/ops/neighbour-max.wat with wabt and writes its bytes into
// neighbour-max-wasm.ts (committed, so neither the build nor the page needs wabt). `--check` only compares.

import { readFileSync, writeFileSync } from 'node:fs';
import wabtInit from 'wabt';

const WAT = 'src/core/model/ops/neighbour-max.wat';
const OUT = 'src/core/model/ops/neighbour-max-wasm.ts';

export async function assemble(): Promise<Uint8Array> {
  const wabt = await wabtInit();
  const mod = wabt.parseWat(WAT, readFileSync(WAT, 'utf8'), { simd: true });
  mod.validate();
  const { buffer } = mod.toBinary({});
  mod.destroy();
  return buffer;
}

export function moduleSource(bytes: Uint8Array): string {
  return `// Generated from neighbour-max.wat by \`npm run build:wasm\` (scripts/build-wasm.ts); do not edit.
export const NEIGHBOUR_MAX_WASM = '${Buffer.from(bytes).toString('base64')}';
`;
}

if (process.argv[1]?.endsWith('build-wasm.ts')) {
  const source = moduleSource(await assemble());
  if (process.argv.includes('--check')) {
    if (readFileSync(OUT, 'utf8') !== source)
      throw new Error(`${OUT} is not ${WAT} as assembled: run npm run build:wasm`);
    console.log(`${OUT} matches ${WAT}`);
  } else {
    writeFileSync(OUT, source);
    console.log(`wrote ${OUT}`);
  }
}
