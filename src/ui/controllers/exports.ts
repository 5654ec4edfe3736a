// Embeddings of the library as files, in the same three formats as `shapekin embed`.

import type { LibraryPart } from '../../core/library';
import { embeddingRow, embeddingsCsv, embeddingsJson } from '../../core/retrieval/export';
import type { EmbeddingIndex } from '../../core/retrieval/index';
import { writeNpyFloat32 } from '../../core/retrieval/npy';
import { download } from './download';

export type EmbeddingFormat = 'csv' | 'json' | 'npy';

/** `units`: mm per file unit by folder, for files whose format has no units (sizes in mm where known). */
export function exportEmbeddings(
  kind: EmbeddingFormat,
  parts: readonly LibraryPart[],
  index: EmbeddingIndex,
  units: Readonly<Record<string, number>>,
): void {
  const D = index.dim;
  if (kind === 'npy') {
    download(new Blob([writeNpyFloat32(index.vectors, index.count, D) as Uint8Array<ArrayBuffer>]), 'embeddings.npy');
    return;
  }
  const rows = parts.map((p) => embeddingRow(p.name, p.label, p.info, p.diagonal, units[p.label]));
  const text = kind === 'json' ? embeddingsJson(rows, index.vectors, D) : embeddingsCsv(rows, index.vectors, D);
  download(new Blob([text], { type: kind === 'json' ? 'application/json' : 'text/csv' }), `embeddings.${kind}`);
}
