// Turns raw parser output (triangle soup or indexed faces) into a validated, welded Mesh and measures it.

import { MeshImportError, type ImportedMesh, type Mesh, type MeshFormat, type MeshInfo, type Vec3 } from './types';

/** Triangles whose area is below this fraction of the bounding-box diagonal squared count as degenerate. */
const DEGENERATE_AREA_FRACTION = 1e-14;

/** Reject NaN / Infinity with the first offending vertex named. */
export function assertFinite(file: string, positions: Float32Array | Float64Array | number[]): void {
  for (let i = 0; i < positions.length; i++) {
    if (!Number.isFinite(positions[i])) {
      const v = Math.floor(i / 3);
      throw new MeshImportError(file, 'non-finite', `vertex ${v} has a non-finite coordinate (${positions[i]})`);
    }
  }
}

export function assertIndicesInRange(file: string, indices: ArrayLike<number>, vertexCount: number): void {
  for (let i = 0; i < indices.length; i++) {
    const k = indices[i];
    if (!(k >= 0 && k < vertexCount) || !Number.isInteger(k)) {
      throw new MeshImportError(
        file,
        'index-out-of-range',
        `face ${Math.floor(i / 3)} refers to vertex ${k}, but the file has ${vertexCount} vertices`,
      );
    }
  }
}

/** Vertices closer than this fraction of the bounding-box diagonal are merged (common practice; exporters
 * repeat shared vertices, and seams computed by cos/sin differ in the last bits). */
export const WELD_TOLERANCE_FRACTION = 1e-6;

/**
 * Merge coincident vertices (STL and many OBJ exports repeat every shared vertex). Coordinates are
 * quantised to a grid of WELD_TOLERANCE_FRACTION × diagonal and hashed (open addressing); the first
 * vertex of each cell keeps its exact coordinates. `indices === null` means triangle soup.
 */
export function weldVertices(
  positions: Float32Array,
  indices: ArrayLike<number> | null,
): { positions: Float32Array; indices: Uint32Array } {
  const vertexCount = positions.length / 3;
  const { min, max } = boundingBox(positions);
  const diag = Math.hypot(max[0] - min[0], max[1] - min[1], max[2] - min[2]);
  const inv = diag > 0 ? 1 / (diag * WELD_TOLERANCE_FRACTION) : 1;
  const qx = new Int32Array(vertexCount),
    qy = new Int32Array(vertexCount),
    qz = new Int32Array(vertexCount);
  let capacity = 1;
  while (capacity < vertexCount * 2) capacity <<= 1;
  const mask = capacity - 1;
  const table = new Int32Array(capacity).fill(-1);
  const remap = new Uint32Array(vertexCount);
  const firstOf: number[] = [];
  for (let v = 0; v < vertexCount; v++) {
    const x = Math.round((positions[v * 3] - min[0]) * inv);
    const y = Math.round((positions[v * 3 + 1] - min[1]) * inv);
    const z = Math.round((positions[v * 3 + 2] - min[2]) * inv);
    qx[v] = x;
    qy[v] = y;
    qz[v] = z;
    let h = (Math.imul(x, 73856093) ^ Math.imul(y, 19349663) ^ Math.imul(z, 83492791)) & mask;
    for (;;) {
      const slot = table[h];
      if (slot < 0) {
        table[h] = firstOf.length;
        remap[v] = firstOf.length;
        firstOf.push(v);
        break;
      }
      const f = firstOf[slot];
      if (qx[f] === x && qy[f] === y && qz[f] === z) {
        remap[v] = slot;
        break;
      }
      h = (h + 1) & mask;
    }
  }
  const welded = new Float32Array(firstOf.length * 3);
  for (let u = 0; u < firstOf.length; u++) {
    const f = firstOf[u] * 3;
    welded[u * 3] = positions[f];
    welded[u * 3 + 1] = positions[f + 1];
    welded[u * 3 + 2] = positions[f + 2];
  }
  let out: Uint32Array;
  if (indices === null) {
    out = remap; // soup: vertex v belongs to triangle floor(v / 3)
  } else {
    out = new Uint32Array(indices.length);
    for (let i = 0; i < indices.length; i++) out[i] = remap[indices[i]];
  }
  return { positions: welded, indices: out };
}

export function boundingBox(positions: Float32Array): { min: Vec3; max: Vec3 } {
  let x0 = Infinity,
    y0 = Infinity,
    z0 = Infinity,
    x1 = -Infinity,
    y1 = -Infinity,
    z1 = -Infinity;
  for (let i = 0; i < positions.length; i += 3) {
    const x = positions[i],
      y = positions[i + 1],
      z = positions[i + 2];
    if (x < x0) x0 = x;
    if (x > x1) x1 = x;
    if (y < y0) y0 = y;
    if (y > y1) y1 = y;
    if (z < z0) z0 = z;
    if (z > z1) z1 = z;
  }
  if (positions.length === 0) return { min: [0, 0, 0], max: [0, 0, 0] };
  return { min: [x0, y0, z0], max: [x1, y1, z1] };
}

/** Twice the area of triangle t (length of the edge cross product). */
export function triangleDoubleArea(p: Float32Array, idx: ArrayLike<number>, t: number): number {
  const a = idx[t * 3] * 3,
    b = idx[t * 3 + 1] * 3,
    c = idx[t * 3 + 2] * 3;
  const ux = p[b] - p[a],
    uy = p[b + 1] - p[a + 1],
    uz = p[b + 2] - p[a + 2];
  const vx = p[c] - p[a],
    vy = p[c + 1] - p[a + 1],
    vz = p[c + 2] - p[a + 2];
  const cx = uy * vz - uz * vy,
    cy = uz * vx - ux * vz,
    cz = ux * vy - uy * vx;
  return Math.sqrt(cx * cx + cy * cy + cz * cz);
}

export function surfaceArea(mesh: Mesh): number {
  if (!mesh.indices) return 0;
  let sum = 0;
  const n = mesh.indices.length / 3;
  for (let t = 0; t < n; t++) sum += triangleDoubleArea(mesh.positions, mesh.indices, t);
  return sum / 2;
}

/**
 * Signed volume by the divergence theorem: sum over triangles of a · (b × c) / 6, with the coordinates
 * taken relative to the first vertex (any origin gives the same sum on a closed surface, and a near one
 * avoids cancellation on parts placed far from the file's origin).
 */
export function signedVolume(positions: Float32Array, indices: Uint32Array): number {
  let sum = 0;
  const ox = positions[0],
    oy = positions[1],
    oz = positions[2];
  for (let i = 0; i < indices.length; i += 3) {
    const a = indices[i] * 3,
      b = indices[i + 1] * 3,
      c = indices[i + 2] * 3;
    const ax = positions[a] - ox,
      ay = positions[a + 1] - oy,
      az = positions[a + 2] - oz;
    const bx = positions[b] - ox,
      by = positions[b + 1] - oy,
      bz = positions[b + 2] - oz;
    const cx = positions[c] - ox,
      cy = positions[c + 1] - oy,
      cz = positions[c + 2] - oz;
    sum += ax * (by * cz - bz * cy) + ay * (bz * cx - bx * cz) + az * (bx * cy - by * cx);
  }
  return sum / 6;
}

/**
 * For each face edge (slot t·3 + e, from corner e to corner e+1 of the input), the other face on that edge; null
 * unless every edge has exactly two faces. Edges are grouped by their lower vertex (counting sort), then by their
 * higher vertex within the group, in typed arrays: linear in the faces for the small vertex degrees meshes have.
 */
function acrossEdges(indices: Uint32Array, vertexCount: number): Int32Array | null {
  const slots = indices.length;
  // The edge at slot s runs from indices[s] to the next corner of its face.
  const lower = (s: number) => Math.min(indices[s], indices[s - (s % 3) + ((s + 1) % 3)]);
  const higher = (s: number) => Math.max(indices[s], indices[s - (s % 3) + ((s + 1) % 3)]);
  const start = new Uint32Array(vertexCount + 1);
  for (let s = 0; s < slots; s++) start[lower(s) + 1]++;
  for (let v = 0; v < vertexCount; v++) start[v + 1] += start[v];
  const fill = start.slice(0, vertexCount);
  const bySlot = new Uint32Array(slots); // edge slots, grouped by lower vertex
  for (let s = 0; s < slots; s++) bySlot[fill[lower(s)]++] = s;
  const across = new Int32Array(slots);
  for (let v = 0; v < vertexCount; v++) {
    const from = start[v];
    const to = start[v + 1];
    if (to - from > 2) bySlot.subarray(from, to).sort((x, y) => higher(x) - higher(y));
    for (let i = from; i < to;) {
      const h = higher(bySlot[i]);
      let j = i + 1;
      while (j < to && higher(bySlot[j]) === h) j++;
      if (j - i !== 2) return null; // an edge with one face (a border) or three or more: not a closed 2-manifold
      const s1 = bySlot[i];
      const s2 = bySlot[i + 1];
      across[s1] = (s2 / 3) | 0;
      across[s2] = (s1 / 3) | 0;
      i = j;
    }
  }
  return across;
}

/** Which slot of input face t runs between vertices a and b (either way round). */
function edgeSlot(indices: Uint32Array, t: number, a: number, b: number): number {
  for (let e = 0; e < 3; e++) {
    const p = indices[t * 3 + e];
    const q = indices[t * 3 + ((e + 1) % 3)];
    if ((p === a && q === b) || (p === b && q === a)) return e;
  }
  return 0;
}

/**
 * Closed 2-manifold test (every undirected edge used by exactly two triangles) and, when it holds,
 * a consistently oriented copy of the indices: faces are flipped by breadth-first propagation so that
 * each shared edge is walked in opposite directions. Each connected shell keeps the winding most of its
 * faces already had, so a shell that is mostly outward stays outward.
 */
export function orientClosed(
  indices: Uint32Array,
  vertexCount: number,
): { closed: boolean; oriented: Uint32Array | null } {
  const triCount = indices.length / 3;
  const across = acrossEdges(indices, vertexCount);
  if (!across) return { closed: false, oriented: null };

  const out = indices.slice();
  const visited = new Uint8Array(triCount);
  const queue = new Int32Array(triCount);
  const hasDirected = (t: number, a: number, b: number): boolean => {
    for (let e = 0; e < 3; e++) if (out[t * 3 + e] === a && out[t * 3 + ((e + 1) % 3)] === b) return true;
    return false;
  };
  for (let seed = 0; seed < triCount; seed++) {
    if (visited[seed]) continue;
    let head = 0,
      tail = 0,
      members = 0,
      flips = 0;
    const shell: number[] = [];
    visited[seed] = 1;
    queue[tail++] = seed;
    while (head < tail) {
      const t = queue[head++];
      shell.push(t);
      members++;
      for (let e = 0; e < 3; e++) {
        const a = out[t * 3 + e],
          b = out[t * 3 + ((e + 1) % 3)];
        // Flips only swap corners 1 and 2 of a face, so the edge at slot e may have moved: find it by its ends.
        const u = across[t * 3 + edgeSlot(indices, t, a, b)];
        if (visited[u]) continue;
        visited[u] = 1;
        if (hasDirected(u, a, b)) {
          // Same direction on the shared edge: u is wound against t, so flip it.
          const tmp = out[u * 3 + 1];
          out[u * 3 + 1] = out[u * 3 + 2];
          out[u * 3 + 2] = tmp;
          flips++;
        }
        queue[tail++] = u;
      }
    }
    if (flips * 2 > members) {
      for (const t of shell) {
        const tmp = out[t * 3 + 1];
        out[t * 3 + 1] = out[t * 3 + 2];
        out[t * 3 + 2] = tmp;
      }
    }
  }
  return { closed: true, oriented: out };
}

/** Drop triangles with a repeated vertex or (near-)zero area; returns the kept indices and the count dropped. */
export function dropDegenerate(
  positions: Float32Array,
  indices: Uint32Array,
): { indices: Uint32Array; dropped: number } {
  const { min, max } = boundingBox(positions);
  const diagSq = (max[0] - min[0]) ** 2 + (max[1] - min[1]) ** 2 + (max[2] - min[2]) ** 2;
  const minDoubleArea = 2 * DEGENERATE_AREA_FRACTION * diagSq;
  const kept = new Uint32Array(indices.length);
  let k = 0;
  const n = indices.length / 3;
  for (let t = 0; t < n; t++) {
    const a = indices[t * 3],
      b = indices[t * 3 + 1],
      c = indices[t * 3 + 2];
    if (a === b || b === c || a === c) continue;
    if (!(triangleDoubleArea(positions, indices, t) > minDoubleArea)) continue;
    kept[k++] = a;
    kept[k++] = b;
    kept[k++] = c;
  }
  return { indices: kept.slice(0, k), dropped: n - k / 3 };
}

/** Remove vertices no triangle uses, so the bounding box describes the surface. */
function compact(positions: Float32Array, indices: Uint32Array): { positions: Float32Array; indices: Uint32Array } {
  const vertexCount = positions.length / 3;
  const map = new Int32Array(vertexCount).fill(-1);
  let next = 0;
  for (let i = 0; i < indices.length; i++) if (map[indices[i]] < 0) map[indices[i]] = next++;
  if (next === vertexCount) return { positions, indices };
  const p = new Float32Array(next * 3);
  for (let v = 0; v < vertexCount; v++) {
    const m = map[v];
    if (m >= 0) {
      p[m * 3] = positions[v * 3];
      p[m * 3 + 1] = positions[v * 3 + 1];
      p[m * 3 + 2] = positions[v * 3 + 2];
    }
  }
  const idx = new Uint32Array(indices.length);
  for (let i = 0; i < indices.length; i++) idx[i] = map[indices[i]];
  return { positions: p, indices: idx };
}

export interface RawGeometry {
  readonly positions: Float32Array;
  /** Triangle indices, or null: with `soup` the positions are triangle soup, else a point set. */
  readonly indices: ArrayLike<number> | null;
  readonly soup?: boolean;
}

/** Validate, weld, clean and measure parser output. */
export function finishMesh(file: string, format: MeshFormat, raw: RawGeometry, fileBytes: number): ImportedMesh {
  assertFinite(file, raw.positions);
  const vertexInput = raw.positions.length / 3;
  if (vertexInput === 0) throw new MeshImportError(file, 'no-geometry', 'the file contains no vertices');

  if (!raw.soup && raw.indices === null) {
    const { min, max } = boundingBox(raw.positions);
    const mesh: Mesh = { positions: raw.positions, indices: null };
    return { name: file, mesh, info: makeInfo(format, mesh, 0, 0, min, max, false, null, fileBytes) };
  }

  if (raw.indices) assertIndicesInRange(file, raw.indices, vertexInput);
  if (raw.soup && vertexInput % 3 !== 0) {
    throw new MeshImportError(file, 'parse-failed', `triangle soup has ${vertexInput} vertices, not a multiple of 3`);
  }
  const welded = weldVertices(raw.positions, raw.soup ? null : raw.indices);
  const inputTriangles = welded.indices.length / 3;
  const { indices: cleanIdx, dropped } = dropDegenerate(welded.positions, welded.indices);
  if (cleanIdx.length === 0) {
    throw new MeshImportError(file, 'zero-area', `all ${inputTriangles} triangles have zero area`);
  }
  const { positions, indices } = compact(welded.positions, cleanIdx);
  const { closed, oriented } = orientClosed(indices, positions.length / 3);
  const finalIdx = oriented ?? indices;
  const mesh: Mesh = { positions, indices: finalIdx };
  let volume: number | null = null;
  if (closed) {
    // A closed surface wound inward has negative signed volume: flip it so face normals point outward.
    const signed = signedVolume(positions, finalIdx);
    if (signed < 0)
      for (let t = 0; t < finalIdx.length; t += 3) {
        const tmp = finalIdx[t + 1];
        finalIdx[t + 1] = finalIdx[t + 2];
        finalIdx[t + 2] = tmp;
      }
    volume = Math.abs(signed);
  }
  const { min, max } = boundingBox(positions);
  return {
    name: file,
    mesh,
    info: makeInfo(format, mesh, dropped, surfaceArea(mesh), min, max, closed, volume, fileBytes),
  };
}

function makeInfo(
  format: MeshFormat,
  mesh: Mesh,
  degenerateSkipped: number,
  area: number,
  min: Vec3,
  max: Vec3,
  closed: boolean,
  volume: number | null,
  fileBytes: number,
): MeshInfo {
  return {
    format,
    vertexCount: mesh.positions.length / 3,
    triangleCount: mesh.indices ? mesh.indices.length / 3 : 0,
    degenerateSkipped,
    bboxMin: min,
    bboxMax: max,
    extents: [max[0] - min[0], max[1] - min[1], max[2] - min[2]],
    area,
    closed,
    volume,
    fileBytes,
    bodies: null,
    units: format === 'step' || format === 'iges' || format === 'gltf' || format === '3mf' ? 'mm' : 'file',
  };
}
