// PLY (ASCII, binary little- and big-endian; with faces or vertices only) through three.js's PLYLoader.

import { PLYLoader } from 'three/examples/jsm/loaders/PLYLoader.js';
import { finishMesh } from './geometry';
import { startsWithWord } from './text';
import { MeshImportError, type ImportedMesh } from './types';

export function parsePly(buffer: ArrayBuffer, file: string): ImportedMesh {
  const bytes = new Uint8Array(buffer);
  if (!startsWithWord(bytes, 'ply')) throw new MeshImportError(file, 'unrecognised', 'not a PLY file: it does not begin with "ply"');
  let positions: Float32Array;
  let index: ArrayLike<number> | null;
  try {
    const geometry = new PLYLoader().parse(buffer);
    const attr = geometry.getAttribute('position');
    if (!attr) throw new Error('no vertex element');
    positions = attr.array instanceof Float32Array ? attr.array : new Float32Array(attr.array as ArrayLike<number>);
    index = geometry.getIndex()?.array ?? null;
  } catch (err) {
    const message = (err as Error).message;
    const truncated = err instanceof RangeError;
    throw new MeshImportError(file, truncated ? 'truncated' : 'parse-failed',
      truncated ? `PLY body ends before the counts in its header (${message})` : `PLY could not be parsed (${message})`);
  }
  if (index && index.length === 0) index = null;
  // PLYLoader de-indexes geometry that has per-face colours: the header then tells soup from a point set.
  const declaredFaces = Number(/element\s+face\s+(\d+)/.exec(headerText(bytes))?.[1] ?? 0);
  if (index === null && declaredFaces > 0) {
    return finishMesh(file, 'ply', { positions, indices: null, soup: true }, buffer.byteLength);
  }
  return finishMesh(file, 'ply', { positions, indices: index }, buffer.byteLength);
}

function headerText(bytes: Uint8Array): string {
  let end = 0;
  const limit = Math.min(bytes.length, 65536);
  let text = '';
  while (end < limit) {
    const b = bytes[end++];
    text += String.fromCharCode(b);
    if (b === 10 && text.endsWith('end_header\n')) break;
  }
  return text;
}
