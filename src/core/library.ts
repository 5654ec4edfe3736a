// A parts library in memory: each file's label (its folder), measurements, normalised cloud and mesh.

import type { ImportFailure } from './mesh/import';
import { importMesh } from './mesh/import';
import { MeshImportError, type MeshInfo } from './mesh/types';
import { samplePart } from './points/part';

export interface LibraryPart {
  /** Path inside the library, e.g. "washer/BC01-100A.stl". */
  readonly name: string;
  /** The folder the file sits in ("" at the top level): evaluation labels come from here. */
  readonly label: string;
  readonly info: MeshInfo;
  /** Unit-sphere cloud (stride 3) and per-point normals (zero where unknown). */
  readonly points: Float32Array;
  readonly normals: Float32Array;
  readonly centre: readonly [number, number, number];
  readonly radius: number;
  readonly diagonal: number;
  /** The welded mesh in file units (for viewers); triangle-less parts have indices of length 0. */
  readonly meshPositions: Float32Array;
  readonly meshIndices: Uint32Array;
}

export interface SamplingSettings {
  readonly points: number;
  readonly seed: number;
}

export const DEFAULT_SAMPLING: SamplingSettings = { points: 1024, seed: 0 };

/** The parent folder of a path, as the label: "a/b/washer/x.stl" → "washer"; "x.stl" → "". */
export function labelFromPath(path: string): string {
  const parts = path.split(/[\\/]/).filter(Boolean);
  return parts.length >= 2 ? parts[parts.length - 2] : '';
}

/** Import and sample one file; throws MeshImportError naming the file. */
export function loadPart(
  buffer: ArrayBuffer,
  name: string,
  settings: SamplingSettings,
  maxBytes?: number,
): LibraryPart {
  const imported = importMesh(buffer, name, maxBytes === undefined ? {} : { maxBytes });
  let sampled;
  try {
    sampled = samplePart(imported, settings.points, settings.seed);
  } catch (err) {
    throw new MeshImportError(name, 'zero-area', `could not be sampled (${(err as Error).message})`);
  }
  const normals = sampled.cloud.normals ?? new Float32Array(sampled.cloud.positions.length);
  return {
    name,
    label: labelFromPath(name),
    info: imported.info,
    points: sampled.cloud.positions,
    normals,
    centre: sampled.centre,
    radius: sampled.radius,
    diagonal: sampled.diagonal,
    meshPositions: imported.mesh.positions,
    meshIndices: imported.mesh.indices ?? new Uint32Array(0),
  };
}

export function failureOf(name: string, err: unknown): ImportFailure {
  if (err instanceof MeshImportError) return { file: err.file, code: err.code, reason: err.reason };
  return { file: name, code: 'parse-failed', reason: String((err as Error)?.message ?? err) };
}

/** The typed arrays of a part, to move (not copy) to another thread. */
export function partTransfers(part: LibraryPart): ArrayBuffer[] {
  return [part.points.buffer, part.normals.buffer, part.meshPositions.buffer, part.meshIndices.buffer] as ArrayBuffer[];
}
