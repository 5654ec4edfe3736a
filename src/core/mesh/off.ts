// Object File Format (OFF, with the COFF / NOFF / CNOFF variants): no three.js loader exists, so it is here.
// Header keyword, then "V F E", then V vertex lines (extra columns such as colours or normals ignored),
// then F faces "n i0 … i(n-1) [colour]", fan-triangulated.

import { finishMesh } from './geometry';
import { isSpace, numbersIn } from './text';
import { MeshImportError, type ImportedMesh } from './types';

/**
 * The file's content lines: comments ("#" to the end of the line) cut off, blank lines skipped, each line kept
 * as where it starts and ends in the text with its outer spaces trimmed. Scanned in place, with no string made
 * per line or per number (a 130 KB file of 4,000 triangles was split into some 30,000 strings before).
 */
class Lines {
  private pos = 0;
  start = 0;
  end = 0;
  constructor(private readonly text: string) {}

  /** Moves to the next non-blank line; false at the end of the text. */
  next(): boolean {
    const text = this.text;
    const n = text.length;
    while (this.pos < n) {
      let s = this.pos;
      let e = s;
      let cut = -1;
      while (e < n) {
        const c = text.charCodeAt(e);
        if (c === 10 || c === 13) break;
        if (c === 35 && cut < 0) cut = e;
        e++;
      }
      // "\r\n" is one line break; a lone "\r" or "\n" is one too.
      this.pos = text.charCodeAt(e) === 13 && text.charCodeAt(e + 1) === 10 ? e + 2 : e + 1;
      if (cut >= 0) e = cut;
      while (s < e && isSpace(text.charCodeAt(s))) s++;
      while (e > s && isSpace(text.charCodeAt(e - 1))) e--;
      if (e > s) {
        this.start = s;
        this.end = e;
        return true;
      }
    }
    return false;
  }

  /** How many non-blank lines are left after this one. */
  countRest(): number {
    let count = 0;
    while (this.next()) count++;
    return count;
  }

  /** This line's words as numbers (as `Number()` reads each); `into` is reused. */
  numbers(into: number[]): number[] {
    return numbersIn(this.text, this.start, this.end, into);
  }

  /** This line's words as text (for messages and the header). */
  words(): string[] {
    return this.text.slice(this.start, this.end).split(/\s+/);
  }
}

export function parseOff(text: string, file: string, fileBytes: number): ImportedMesh {
  const lines = new Lines(text);
  if (!lines.next()) throw new MeshImportError(file, 'unrecognised', 'not an OFF file: no content');
  const first = lines.words();
  const keyword = first[0];
  if (!/^(ST)?C?N?4?n?OFF$/.test(keyword))
    throw new MeshImportError(file, 'unrecognised', `not an OFF file: first word is "${keyword.slice(0, 20)}"`);
  if (keyword.includes('4') || keyword.includes('n'))
    throw new MeshImportError(file, 'unrecognised', `OFF variant "${keyword}" (not 3-D) is not supported`);
  let counts = first.slice(1);
  if (counts.length < 2) {
    if (!lines.next()) throw new MeshImportError(file, 'truncated', 'OFF header has no vertex and face counts');
    counts = lines.words();
  }
  const vertexCount = Number(counts[0]);
  const faceCount = Number(counts[1]);
  if (!Number.isInteger(vertexCount) || !Number.isInteger(faceCount) || vertexCount < 0 || faceCount < 0) {
    throw new MeshImportError(file, 'parse-failed', `OFF counts "${counts.join(' ')}" are not whole numbers`);
  }
  // Normals or colours after the coordinates (NOFF, COFF) are ignored.
  const positions = new Float32Array(vertexCount * 3);
  const row: number[] = [];
  for (let v = 0; v < vertexCount; v++) {
    if (!lines.next()) throw endsEarly(file, vertexCount, 'vertices', v);
    const values = lines.numbers(row);
    if (values.length < 3)
      throw new MeshImportError(
        file,
        'parse-failed',
        `OFF vertex ${v} has ${values.length} values, expected 3: the counts in the header may not match the data`,
      );
    for (let k = 0; k < 3; k++) {
      if (Number.isNaN(values[k])) {
        const word = lines.words()[k];
        if (!/^[+-]?nan$/i.test(word))
          throw new MeshImportError(file, 'parse-failed', `OFF vertex ${v}: "${word.slice(0, 20)}" is not a number`);
      }
    }
    positions[v * 3] = values[0];
    positions[v * 3 + 1] = values[1];
    positions[v * 3 + 2] = values[2];
  }
  let indices = new Uint32Array(Math.max(16, faceCount * 3));
  let used = 0;
  for (let f = 0; f < faceCount; f++) {
    if (!lines.next()) throw endsEarly(file, faceCount, 'faces', f);
    const parts = lines.numbers(row);
    const n = parts[0];
    if (!Number.isInteger(n) || n < 3 || parts.length < n + 1) {
      throw new MeshImportError(
        file,
        'parse-failed',
        `OFF face ${f} is malformed ("${parts.slice(0, 6).join(' ')}"): the counts in the header may not match the data`,
      );
    }
    if (used + (n - 2) * 3 > indices.length) {
      const grown = new Uint32Array(Math.max(indices.length * 2, used + (n - 2) * 3));
      grown.set(indices);
      indices = grown;
    }
    // Fan triangulation; an index that is not a whole number ≥ 0 becomes one past any vertex (reported as out of range).
    const a = vertexIndex(parts[1]);
    for (let k = 1; k < n - 1; k++) {
      indices[used++] = a;
      indices[used++] = vertexIndex(parts[1 + k]);
      indices[used++] = vertexIndex(parts[2 + k]);
    }
  }
  const extra = lines.countRest();
  if (extra > 0) {
    throw new MeshImportError(
      file,
      'parse-failed',
      `OFF header declares ${vertexCount} vertices and ${faceCount} faces, but ${extra} more lines follow them: the counts do not match the data`,
    );
  }
  const raw = faceCount === 0 ? { positions, indices: null } : { positions, indices: indices.slice(0, used) };
  return finishMesh(file, 'off', raw, fileBytes);
}

/** The file ends after `read` of the `declared` vertices or faces. */
function endsEarly(file: string, declared: number, what: string, read: number): MeshImportError {
  return new MeshImportError(
    file,
    'truncated',
    `OFF header declares ${declared} ${what} but the file ends after ${read}`,
  );
}

function vertexIndex(i: number): number {
  return i < 0 || !Number.isInteger(i) ? 0xffffffff : i;
}
