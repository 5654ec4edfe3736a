// Object File Format (OFF, with the COFF / NOFF / CNOFF variants): no three.js loader exists, so it is here.
// Header keyword, then "V F E", then V vertex lines (extra columns such as colours or normals ignored),
// then F faces "n i0 … i(n-1) [colour]", fan-triangulated.

import { finishMesh } from './geometry';
import { MeshImportError, type ImportedMesh } from './types';

function tokenise(text: string): string[] {
  const tokens: string[] = [];
  for (const rawLine of text.split(/\r\n|\n|\r/)) {
    const hash = rawLine.indexOf('#');
    const line = hash >= 0 ? rawLine.slice(0, hash) : rawLine;
    const trimmed = line.trim();
    if (trimmed) tokens.push(trimmed);
  }
  return tokens;
}

export function parseOff(text: string, file: string, fileBytes: number): ImportedMesh {
  const lines = tokenise(text);
  if (lines.length === 0) throw new MeshImportError(file, 'unrecognised', 'not an OFF file: no content');
  const first = lines[0].split(/\s+/);
  const keyword = first[0];
  if (!/^(ST)?C?N?4?n?OFF$/.test(keyword))
    throw new MeshImportError(file, 'unrecognised', `not an OFF file: first word is "${keyword.slice(0, 20)}"`);
  if (keyword.includes('4') || keyword.includes('n'))
    throw new MeshImportError(file, 'unrecognised', `OFF variant "${keyword}" (not 3-D) is not supported`);
  const withNormals = keyword.includes('N');
  let line = 1;
  let counts = first.slice(1);
  if (counts.length < 2) {
    if (line >= lines.length) throw new MeshImportError(file, 'truncated', 'OFF header has no vertex and face counts');
    counts = lines[line++].split(/\s+/);
  }
  const vertexCount = Number(counts[0]);
  const faceCount = Number(counts[1]);
  if (!Number.isInteger(vertexCount) || !Number.isInteger(faceCount) || vertexCount < 0 || faceCount < 0) {
    throw new MeshImportError(file, 'parse-failed', `OFF counts "${counts.join(' ')}" are not whole numbers`);
  }
  if (line + vertexCount > lines.length) {
    throw new MeshImportError(
      file,
      'truncated',
      `OFF header declares ${vertexCount} vertices but the file ends after ${lines.length - line}`,
    );
  }
  const positions = new Float32Array(vertexCount * 3);
  for (let v = 0; v < vertexCount; v++) {
    const parts = lines[line++].split(/\s+/);
    if (parts.length < 3)
      throw new MeshImportError(
        file,
        'parse-failed',
        `OFF vertex ${v} has ${parts.length} values, expected 3: the counts in the header may not match the data`,
      );
    for (let k = 0; k < 3; k++) {
      if (Number.isNaN(Number(parts[k])) && !/^[+-]?nan$/i.test(parts[k])) {
        throw new MeshImportError(file, 'parse-failed', `OFF vertex ${v}: "${parts[k].slice(0, 20)}" is not a number`);
      }
    }
    positions[v * 3] = Number(parts[0]);
    positions[v * 3 + 1] = Number(parts[1]);
    positions[v * 3 + 2] = Number(parts[2]);
  }
  void withNormals; // normals, if present, follow the coordinates and are ignored like colours
  if (line + faceCount > lines.length) {
    throw new MeshImportError(
      file,
      'truncated',
      `OFF header declares ${faceCount} faces but the file ends after ${lines.length - line}`,
    );
  }
  const indices: number[] = [];
  for (let f = 0; f < faceCount; f++) {
    const parts = lines[line++].split(/\s+/).map(Number);
    const n = parts[0];
    if (!Number.isInteger(n) || n < 3 || parts.length < n + 1) {
      throw new MeshImportError(
        file,
        'parse-failed',
        `OFF face ${f} is malformed ("${parts.slice(0, 6).join(' ')}"): the counts in the header may not match the data`,
      );
    }
    for (let k = 1; k < n - 1; k++) indices.push(parts[1], parts[1 + k], parts[2 + k]);
  }
  if (line < lines.length) {
    throw new MeshImportError(
      file,
      'parse-failed',
      `OFF header declares ${vertexCount} vertices and ${faceCount} faces, but ${lines.length - line} more lines follow them: the counts do not match the data`,
    );
  }
  const raw =
    faceCount === 0
      ? { positions, indices: null }
      : { positions, indices: Uint32Array.from(indices.map((i) => (i < 0 || !Number.isInteger(i) ? 0xffffffff : i))) };
  return finishMesh(file, 'off', raw, fileBytes);
}
