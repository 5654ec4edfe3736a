// Embeddings of the library as files, in the same three formats as `shapekin embed`.

import type { LibraryPart } from '../../core/library';
import { embeddingsCsv, embeddingsJson } from '../../core/retrieval/export';
import type { EmbeddingIndex } from '../../core/retrieval/index';
import { writeNpyFloat32 } from '../../core/retrieval/npy';
import { download } from './download';

export type EmbeddingFormat = 'csv' | 'json' | 'npy';

export function exportEmbeddings(kind: EmbeddingFormat, parts: readonly LibraryPart[], index: EmbeddingIndex): void {
  const D = index.dim;
  if (kind === 'npy') {
    download(new Blob([writeNpyFloat32(index.vectors, index.count, D) as Uint8Array<ArrayBuffer>]), 'embeddings.npy');
    return;
  }
  const rows = parts.map((p) => ({
    file: p.name,
    label: p.label,
    extents: p.info.extents,
    diagonal: p.diagonal,
    units: p.info.units,
  }));
  const text = kind === 'json' ? embeddingsJson(rows, index.vectors, D) : embeddingsCsv(rows, index.vectors, D);
  download(new Blob([text], { type: kind === 'json' ? 'application/json' : 'text/csv' }), `embeddings.${kind}`);
}
