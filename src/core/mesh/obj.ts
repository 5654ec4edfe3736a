// Wavefront OBJ geometry, read by hand after the format's description (Wavefront "Object Files (.obj)",
// Advanced Visualizer manual, appendix B1): "v x y z [w]" vertices, "f" faces of vertex references
// ("i", "i/t", "i//n", "i/t/n"; negative ones count back from the latest vertex), fan-triangulated; lines
// may be indented and continued with a trailing backslash. Everything else (groups, materials, texture
// coordinates, normals, lines, curves, faces of fewer than three corners) carries no surface and is skipped. Memory grows with the vertices
// and face corners the file really has, in typed arrays, whatever else the file repeats.

import { finishMesh } from './geometry';
import { isSpace, numbersIn, readNumber } from './text';
import { MeshImportError, type ImportedMesh } from './types';

/** A Float32Array or Uint32Array that doubles as it fills. */
class Growable<T extends Float32Array | Uint32Array> {
  length = 0;
  constructor(
    private data: T,
    private readonly make: (n: number) => T,
  ) {}
  push(v: number): void {
    if (this.length === this.data.length) {
      const bigger = this.make(this.data.length * 2);
      bigger.set(this.data);
      this.data = bigger;
    }
    this.data[this.length++] = v;
  }
  view(): T {
    return this.data.subarray(0, this.length) as T;
  }
}

const isBlank = (c: number) => c === 32 || c === 9 || c === 11 || c === 12 || c === 13;

/** Whether the line from..to ends in a backslash, white space after it allowed (a continued line). */
function continues(text: string, from: number, to: number): boolean {
  let e = to;
  while (e > from && isSpace(text.charCodeAt(e - 1))) e--;
  return e > from && text.charCodeAt(e - 1) === 92;
}

export function parseObj(text: string, file: string, fileBytes: number): ImportedMesh {
  const positions = new Growable(new Float32Array(3 * 1024), (n) => new Float32Array(n));
  const indices = new Growable(new Uint32Array(3 * 1024), (n) => new Uint32Array(n));
  const corners: number[] = [];
  let vertices = 0;
  const row: number[] = [];
  let lineNo = 0;
  let start = 0;
  while (start < text.length) {
    // One logical line: physical lines joined where one ends in a backslash (rare: then a joined copy is read).
    let end = text.indexOf('\n', start);
    if (end < 0) end = text.length;
    lineNo++;
    const firstLine = lineNo;
    let line = text;
    let from = start;
    let to = end;
    start = end + 1;
    if (continues(text, from, to)) {
      let joined = text.slice(from, to);
      while (/\\\s*$/.test(joined) && start < text.length) {
        end = text.indexOf('\n', start);
        if (end < 0) end = text.length;
        lineNo++;
        joined = joined.replace(/\\\s*$/, ' ') + text.slice(start, end);
        start = end + 1;
      }
      line = joined;
      from = 0;
      to = joined.length;
    }
    let i = from;
    while (i < to && isBlank(line.charCodeAt(i))) i++;
    const c0 = line.charCodeAt(i);
    const c1 = i + 1 < to ? line.charCodeAt(i + 1) : NaN;
    if (!(isBlank(c1) || Number.isNaN(c1))) continue; // vt, vn, usemtl, …: not geometry
    if (c0 === 118 /* v */) {
      const values = numbersIn(line, i + 2, to, row);
      if (values.length < 3) {
        throw new MeshImportError(
          file,
          'parse-failed',
          `line ${firstLine}: a vertex needs x y z, got "${line.slice(from, to).trim().slice(0, 40)}"`,
        );
      }
      for (let k = 0; k < 3; k++) {
        const v = values[k];
        if (Number.isNaN(v)) {
          const word = line
            .slice(i + 2, to)
            .trim()
            .split(/\s+/)[k];
          if (!/^[+-]?nan$/i.test(word))
            throw new MeshImportError(
              file,
              'parse-failed',
              `line ${firstLine}: "${word.slice(0, 20)}" is not a number`,
            );
        }
        positions.push(v);
      }
      vertices++;
    } else if (c0 === 102 /* f */) {
      corners.length = 0;
      let w = i + 2;
      while (w < to) {
        while (w < to && isSpace(line.charCodeAt(w))) w++;
        if (w >= to) break;
        let e = w;
        let slash = -1;
        while (e < to && !isSpace(line.charCodeAt(e))) {
          if (slash < 0 && line.charCodeAt(e) === 47) slash = e;
          e++;
        }
        const refEnd = slash < 0 ? e : slash;
        const k = refEnd > w ? readNumber(line, w, refEnd) : NaN;
        if (!Number.isInteger(k)) {
          throw new MeshImportError(
            file,
            'parse-failed',
            `line ${firstLine}: "${line.slice(w, e).slice(0, 20)}" is not a vertex reference`,
          );
        }
        const absolute = k < 0 ? vertices + k : k - 1;
        if (k === 0 || absolute < 0 || absolute >= vertices) {
          throw new MeshImportError(
            file,
            'index-out-of-range',
            `line ${firstLine}: face refers to vertex ${k}, but only ${vertices} vertices are defined before it`,
          );
        }
        corners.push(absolute);
        w = e;
      }
      // A face of one or two corners has no area: skipped like a line, as three.js's OBJLoader does (real
      // exports write them: 5 of the furniture validation set's 152 files).
      for (let k = 1; k < corners.length - 1; k++) {
        indices.push(corners[0]);
        indices.push(corners[k]);
        indices.push(corners[k + 1]);
      }
    }
  }
  if (vertices === 0) throw new MeshImportError(file, 'unrecognised', 'not an OBJ file: no "v x y z" vertex lines');
  // Without faces the vertices are a point set (a scan saved as OBJ).
  const faceIndices = indices.length > 0 ? indices.view() : null;
  return finishMesh(file, 'obj', { positions: positions.view(), indices: faceIndices }, fileBytes);
}
