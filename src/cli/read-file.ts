// Reading one part file from disk: the size cap is checked with stat before any byte is read, and
// OpenCascade is made ready for a CAD file (loaded once; again only after it trapped).

import { readFileSync, statSync } from 'node:fs';
import { needsCadReader } from '../core/mesh/import';
import { loadCadReader } from '../core/mesh/occt';
import { MeshImportError } from '../core/mesh/types';

export async function prepareToRead(path: string, name: string, maxBytes: number): Promise<void> {
  const size = statSync(path).size;
  if (size > maxBytes)
    throw new MeshImportError(
      name,
      'too-large',
      `the file is ${size} bytes, over the ${maxBytes}-byte limit (raise it with --max-file-mb)`,
    );
  if (needsCadReader(name)) await loadCadReader();
}

export function readBytes(path: string): ArrayBuffer {
  const b = readFileSync(path);
  return b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength) as ArrayBuffer;
}
