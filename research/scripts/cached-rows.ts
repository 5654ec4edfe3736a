// Research: a saved run's retrieval rows (learned, or the untrained encoders of its seed), without the surface grid,
// cached in a folder per run: they take minutes on 990 parts, the descriptors set beside them seconds.
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { defaultTrainFor, libraryTraits } from '../../src/core/model/defaults';
import type { LibraryPart } from '../../src/core/library';
import { loadRun } from '../../src/cli/run-dir';
import { loadLibrary } from '../../src/cli/library-dir';
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS } from '../../src/core/model/defaults';
import { encodersFromCheckpoint } from '../../src/core/model/checkpoint';
import { embedForRetrieval, disposeEncoders } from '../../src/core/model/embed';
import { untrainedEncoders } from '../../src/core/quality/evaluate';

export function cachedEncoderRows(
  name: 'learned' | 'untrained',
  run: Awaited<ReturnType<typeof loadRun>>,
  runDir: string,
  library: readonly LibraryPart[],
  cache: string,
): Float32Array {
  const file = join(cache, `${basename(runDir)}-${name}.f32`);
  if (existsSync(file)) {
    const b = readFileSync(file);
    return new Float32Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  }
  const config = run.manifest.config;
  const encoder = { ...config.encoder, surfaceGrid: null };
  const e =
    name === 'learned'
      ? encodersFromCheckpoint({ ...run, manifest: { ...run.manifest, config: { ...config, encoder } } })
      : untrainedEncoders({ ...defaultTrainFor(libraryTraits(library)).encoder, ...encoder }, config.pose, config.seed);
  const parts = library.map((p) => ({ points: p.points, normals: p.normals }));
  const v = embedForRetrieval(e, parts, 256, config.pose);
  disposeEncoders(e);
  writeFileSync(file, Buffer.from(v.buffer, v.byteOffset, v.byteLength));
  return v;
}

/** The command line's flag value (`--flag value`), or undefined. */
export const arg = (flag: string): string | undefined => {
  const i = process.argv.indexOf(flag);
  return i > 0 ? process.argv[i + 1] : undefined;
};

/**
 * What these scripts start from: the library named first on the command line with its pools, the run of `--run`,
 * and the cache folder of `--cache` (made if missing).
 */
export async function savedRunOnLibrary() {
  await initBackend();
  const libDir = process.argv[2];
  const lib = await loadLibrary(libDir, { quiet: true, points: POOL_POINTS });
  const parts = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
  const runDir = arg('--run')!;
  const run = await loadRun(runDir);
  const cache = arg('--cache') ?? '/tmp/views-fusion';
  mkdirSync(cache, { recursive: true });
  const { pose, seed } = run.manifest.config;
  return { libDir, lib, parts, n: parts.length, runDir, run, pose, seed, cache };
}
