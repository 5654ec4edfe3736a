// STL (binary and ASCII): format detection by byte length, then three.js's STLLoader for the parse.

import { STLLoader } from 'three/examples/jsm/loaders/STLLoader.js';
import { finishMesh } from './geometry';
import { decodeText, looksLikeText, startsWithWord } from './text';
import { MeshImportError, type ImportedMesh } from './types';

const HEADER_BYTES = 80;
const RECORD_BYTES = 50; // normal (12) + 3 vertices (36) + attribute byte count (2)

export type StlKind = { kind: 'binary'; triangles: number } | { kind: 'ascii' };

/**
 * A binary STL is 80 header bytes, a little-endian uint32 triangle count, then 50-byte records.
 * The byte length decides: a header may begin with "solid" (many exporters write it), so that word
 * alone never makes a file ASCII.
 */
export function detectStl(buffer: ArrayBuffer, file: string): StlKind {
  const bytes = new Uint8Array(buffer);
  if (buffer.byteLength >= HEADER_BYTES + 4) {
    const declared = new DataView(buffer).getUint32(HEADER_BYTES, true);
    if (HEADER_BYTES + 4 + declared * RECORD_BYTES === buffer.byteLength)
      return { kind: 'binary', triangles: declared };
  }
  const text = looksLikeText(bytes, 4096);
  if (text && startsWithWord(bytes, 'solid')) return { kind: 'ascii' };
  if (!text && buffer.byteLength >= HEADER_BYTES + 4) {
    const declared = new DataView(buffer).getUint32(HEADER_BYTES, true);
    const expected = HEADER_BYTES + 4 + declared * RECORD_BYTES;
    const whole = Math.floor((buffer.byteLength - HEADER_BYTES - 4) / RECORD_BYTES);
    throw new MeshImportError(
      file,
      'truncated',
      `binary STL header declares ${declared} triangles (${expected} bytes) but the file has ${buffer.byteLength} bytes ` +
        `(room for ${whole} triangles): the file is truncated or corrupt`,
    );
  }
  if (!text)
    throw new MeshImportError(
      file,
      'truncated',
      `binary STL is ${buffer.byteLength} bytes, shorter than its 84-byte header`,
    );
  throw new MeshImportError(file, 'unrecognised', `not an STL file: text that does not begin with "solid"`);
}

export function parseStl(buffer: ArrayBuffer, file: string): ImportedMesh {
  const kind = detectStl(buffer, file);
  if (kind.kind === 'binary' && kind.triangles === 0) {
    throw new MeshImportError(file, 'no-geometry', 'binary STL declares 0 triangles');
  }
  let positions: Float32Array;
  if (kind.kind === 'ascii') {
    positions = parseAsciiStl(decodeText(buffer), file);
  } else {
    try {
      // STLLoader repeats the same size test, so a "solid" header of the right length parses as binary.
      const geometry = new STLLoader().parse(buffer);
      positions = geometry.getAttribute('position').array as Float32Array;
    } catch (err) {
      throw new MeshImportError(file, 'parse-failed', `STL could not be parsed (${(err as Error).message})`);
    }
  }
  return finishMesh(
    file,
    kind.kind === 'binary' ? 'stl-binary' : 'stl-ascii',
    { positions, indices: null, soup: true },
    buffer.byteLength,
  );
}

/**
 * ASCII STL by hand: STLLoader's number pattern silently skips a vertex such as "vertex 0 nan 1",
 * which would shift every later triangle; here each facet must hold exactly three finite vertices.
 */
export function parseAsciiStl(text: string, file: string): Float32Array {
  const values: number[] = [];
  const pattern = /\b(facet|vertex|endfacet)\b([^\n\r]*)/g;
  let facet = 0;
  let inFacet = 0;
  for (let m = pattern.exec(text); m; m = pattern.exec(text)) {
    if (m[1] === 'facet') {
      inFacet = 0;
      continue;
    }
    if (m[1] === 'endfacet') {
      if (inFacet !== 3)
        throw new MeshImportError(file, 'parse-failed', `ASCII STL facet ${facet} has ${inFacet} vertices, expected 3`);
      facet++;
      continue;
    }
    const parts = m[2].trim().split(/\s+/);
    const xyz = [Number(parts[0]), Number(parts[1]), Number(parts[2])];
    if (parts.length < 3 || xyz.some((v) => !Number.isFinite(v))) {
      throw new MeshImportError(
        file,
        'non-finite',
        `ASCII STL facet ${facet} has a vertex that is not three finite numbers ("${m[2].trim().slice(0, 40)}")`,
      );
    }
    values.push(xyz[0], xyz[1], xyz[2]);
    inFacet++;
  }
  if (facet === 0)
    throw new MeshImportError(file, 'no-geometry', 'ASCII STL has no complete "facet … endfacet" records');
  return Float32Array.from(values);
}
