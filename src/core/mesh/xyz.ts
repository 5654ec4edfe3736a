// Plain point lists: one point a line, "x y z" separated by white space, commas or semicolons; extra columns
// (normals, colours) ignored; a non-numeric first line is taken as a CSV header.

import { finishMesh } from './geometry';
import { MeshImportError, type ImportedMesh } from './types';

export function parseXyz(text: string, file: string, fileBytes: number): ImportedMesh {
  const values: number[] = [];
  const lines = text.split(/\r\n|\n|\r/);
  let seenData = false;
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i].trim();
    if (!line || line.startsWith('#') || line.startsWith('//')) continue;
    const parts = line.split(/[\s,;]+/);
    const x = Number(parts[0]), y = Number(parts[1]), z = Number(parts[2]);
    if (parts.length < 3 || [parts[0], parts[1], parts[2]].some((p) => p === '' || Number.isNaN(Number(p)) && !/^[+-]?(nan|inf)/i.test(p))) {
      if (!seenData) { seenData = true; continue; } // header line
      throw new MeshImportError(file, 'parse-failed', `line ${i + 1} is not "x y z": "${line.slice(0, 40)}"`);
    }
    seenData = true;
    values.push(x, y, z);
  }
  if (values.length === 0) throw new MeshImportError(file, 'no-geometry', 'no "x y z" point lines found');
  return finishMesh(file, 'xyz', { positions: Float32Array.from(values), indices: null }, fileBytes);
}
