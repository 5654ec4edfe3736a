// Wavefront OBJ through three.js's OBJLoader (n-gons, groups, negative indices), plus an index pre-check
// the loader does not make: an out-of-range index there silently becomes a NaN vertex.

import { Mesh as ThreeMesh, Points as ThreePoints, type BufferGeometry } from 'three';
import { OBJLoader } from 'three/examples/jsm/loaders/OBJLoader.js';
import { finishMesh } from './geometry';
import { MeshImportError, type ImportedMesh } from './types';

function checkObjIndices(text: string, file: string): { vertices: number; faces: number } {
  let vertices = 0;
  let faces = 0;
  let lineNo = 0;
  let start = 0;
  while (start < text.length) {
    let end = text.indexOf('\n', start);
    if (end < 0) end = text.length;
    lineNo++;
    const c0 = text.charCodeAt(start);
    const c1 = text.charCodeAt(start + 1);
    if (c0 === 118 /* v */ && (c1 === 32 || c1 === 9)) vertices++;
    else if (c0 === 102 /* f */ && (c1 === 32 || c1 === 9)) {
      faces++;
      const tokens = text.slice(start + 2, end).trim().split(/\s+/);
      for (const token of tokens) {
        const k = parseInt(token, 10);
        if (Number.isNaN(k)) continue;
        const absolute = k < 0 ? vertices + k : k - 1;
        if (k === 0 || absolute < 0 || absolute >= vertices) {
          throw new MeshImportError(file, 'index-out-of-range',
            `line ${lineNo}: face refers to vertex ${k}, but only ${vertices} vertices are defined before it`);
        }
      }
    }
    start = end + 1;
  }
  return { vertices, faces };
}

export function parseObj(text: string, file: string, fileBytes: number): ImportedMesh {
  const counts = checkObjIndices(text, file);
  if (counts.vertices === 0) throw new MeshImportError(file, 'unrecognised', 'not an OBJ file: no "v x y z" vertex lines');
  let group;
  try {
    // Polyline records ("l …") carry no surface, and OBJLoader turns a whole object containing one into
    // line segments, losing its faces (seen in real exports): drop them before parsing.
    const surfaces = /^l[ \t]/m.test(text) ? text.replace(/^l[ \t][^\n]*$/gm, '') : text;
    group = new OBJLoader().parse(surfaces);
  } catch (err) {
    throw new MeshImportError(file, 'parse-failed', `OBJ could not be parsed (${(err as Error).message})`);
  }
  const triangles: BufferGeometry[] = [];
  const points: BufferGeometry[] = [];
  group.traverse((child) => {
    if (child instanceof ThreeMesh) triangles.push(child.geometry as BufferGeometry);
    else if (child instanceof ThreePoints) points.push(child.geometry as BufferGeometry);
  });
  const parts = triangles.length > 0 ? triangles : points;
  let total = 0;
  for (const g of parts) total += g.getAttribute('position').array.length;
  const positions = new Float32Array(total);
  let offset = 0;
  for (const g of parts) {
    const a = g.getAttribute('position').array as Float32Array;
    positions.set(a, offset);
    offset += a.length;
  }
  const soup = triangles.length > 0;
  return finishMesh(file, 'obj', { positions, indices: null, soup }, fileBytes);
}
