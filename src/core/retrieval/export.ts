// Embeddings written for other tools, the same from the command line (`shapekin embed`) and the workbench:
// CSV (one row a part), JSON (one document) and NumPy .npy (npy.ts). No tfjs, no DOM.

import { csvField } from '../csv';
import type { MeshInfo } from '../mesh/types';
import { partSize } from '../units';

/** What a row says about its part besides the embedding. */
export interface EmbeddingRow {
  readonly file: string;
  readonly label: string;
  /** Bounding-box size x, y, z in `units`. */
  readonly extents: readonly number[];
  readonly diagonal: number;
  /**
   * 'mm' where the units are known — the file states them (STEP, IGES, glTF, 3MF) or a person said what one file
   * unit is — else 'file' (the file's own units).
   */
  readonly units: 'mm' | 'file';
}

/** A part's row: extents and diagonal in mm where its units are known (`mmPerFileUnit` for files without units). */
export function embeddingRow(
  file: string,
  label: string,
  info: Pick<MeshInfo, 'units' | 'extents'>,
  diagonal: number,
  mmPerFileUnit: number | null | undefined,
): EmbeddingRow {
  const s = partSize(info, mmPerFileUnit);
  return { file, label, extents: s.size, diagonal: diagonal * s.scale, units: s.units === 'mm' ? 'mm' : 'file' };
}

/** CSV with a header: file, label, extent_x, extent_y, extent_z, units, e0 … e(D−1); 6 significant digits. */
export function embeddingsCsv(rows: readonly EmbeddingRow[], vectors: Float32Array, dim: number): string {
  const head = [
    'file',
    'label',
    'extent_x',
    'extent_y',
    'extent_z',
    'units',
    ...Array.from({ length: dim }, (_, d) => `e${d}`),
  ].join(',');
  const lines = rows.map((r, i) =>
    [
      csvField(r.file),
      csvField(r.label),
      ...r.extents.map((v) => v.toPrecision(6)),
      r.units,
      ...Array.from(vectors.subarray(i * dim, (i + 1) * dim), (v) => v.toPrecision(6)),
    ].join(','),
  );
  return [head, ...lines].join('\n') + '\n';
}

/** One JSON document: { dim, parts: [{ file, label, extents, diagonal, units, embedding }] }. */
export function embeddingsJson(rows: readonly EmbeddingRow[], vectors: Float32Array, dim: number): string {
  return JSON.stringify({
    dim,
    parts: rows.map((r, i) => ({ ...r, embedding: Array.from(vectors.subarray(i * dim, (i + 1) * dim)) })),
  });
}
