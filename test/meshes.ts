// Test-side mesh builders: byte-by-byte file writers, three.js geometry adapters, and the demo library as model parts.

import type { BufferGeometry } from 'three';
import { finishMesh } from '../src/core/mesh/geometry';
import type { ImportedMesh } from '../src/core/mesh/types';
import { readFileSync, readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { loadPart } from '../src/core/library';
import type { ModelPart } from '../src/core/model/views';

export function fixture(relative: string): ArrayBuffer {
  const bytes = readFileSync(fileURLToPath(new URL(`./fixtures/${relative}`, import.meta.url)));
  return bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength);
}

export function textBuffer(text: string): ArrayBuffer {
  const bytes = new TextEncoder().encode(text);
  return bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength);
}

/** Binary STL written field by field: 80-byte header, uint32 LE count, 50-byte records (normal, 3 vertices, uint16). */
export function writeBinaryStl(triangles: number[][], header = 'test'): ArrayBuffer {
  const buffer = new ArrayBuffer(84 + 50 * triangles.length);
  const view = new DataView(buffer);
  const bytes = new Uint8Array(buffer);
  for (let i = 0; i < Math.min(80, header.length); i++) bytes[i] = header.charCodeAt(i);
  view.setUint32(80, triangles.length, true);
  triangles.forEach((tri, t) => {
    const o = 84 + t * 50;
    for (let k = 0; k < 3; k++) view.setFloat32(o + k * 4, 0, true); // normal left zero, as some exporters do
    for (let k = 0; k < 9; k++) view.setFloat32(o + 12 + k * 4, tri[k], true);
    view.setUint16(o + 48, 0, true);
  });
  return buffer;
}

/** The 2×2×2 cube centred at the origin as 12 outward triangles (9 numbers each). */
export function cubeTriangles(half = 1): number[][] {
  const h = half;
  const quads = [
    [
      [-h, -h, -h],
      [-h, h, -h],
      [h, h, -h],
      [h, -h, -h],
    ], // z = -h, normal -z
    [
      [-h, -h, h],
      [h, -h, h],
      [h, h, h],
      [-h, h, h],
    ], // z = +h
    [
      [-h, -h, -h],
      [h, -h, -h],
      [h, -h, h],
      [-h, -h, h],
    ], // y = -h
    [
      [-h, h, -h],
      [-h, h, h],
      [h, h, h],
      [h, h, -h],
    ], // y = +h
    [
      [-h, -h, -h],
      [-h, -h, h],
      [-h, h, h],
      [-h, h, -h],
    ], // x = -h
    [
      [h, -h, -h],
      [h, h, -h],
      [h, h, h],
      [h, -h, h],
    ], // x = +h
  ];
  const tris: number[][] = [];
  for (const [a, b, c, d] of quads) {
    tris.push([...a, ...b, ...c], [...a, ...c, ...d]);
  }
  return tris;
}

export function asciiStl(triangles: number[][], name = 'part'): string {
  const lines = [`solid ${name}`];
  for (const t of triangles) {
    lines.push('  facet normal 0 0 0', '    outer loop');
    for (let k = 0; k < 3; k++) lines.push(`      vertex ${t[k * 3]} ${t[k * 3 + 1]} ${t[k * 3 + 2]}`);
    lines.push('    endloop', '  endfacet');
  }
  lines.push(`endsolid ${name}`);
  return lines.join('\n');
}

/** A three.js geometry through the same cleaning path as a file (weld, drop degenerate, orient). */
export function fromThree(geometry: BufferGeometry, name: string): ImportedMesh {
  const g = geometry.index ? geometry.toNonIndexed() : geometry;
  const positions = Float32Array.from(g.getAttribute('position').array as ArrayLike<number>);
  return finishMesh(name, 'obj', { positions, indices: null, soup: true }, 0);
}

/** The demo library's good parts (not its broken/ folder) as model parts, sorted by path, sampled with seed 0. */
export function demoModelParts(points: number): ModelPart[] {
  const root = fileURLToPath(new URL('../demo-shapes/', import.meta.url));
  const files: string[] = [];
  const walk = (d: string) =>
    readdirSync(d).forEach((n) => {
      const p = join(d, n);
      if (statSync(p).isDirectory()) walk(p);
      else files.push(p);
    });
  walk(root);
  return files
    .filter((f) => !f.includes('/broken/') && /\.(stl|obj|ply|off)$/.test(f))
    .sort()
    .map((f) => {
      const b = readFileSync(f);
      const part = loadPart(b.buffer.slice(b.byteOffset, b.byteOffset + b.length), f.slice(root.length), {
        points,
        seed: 0,
      });
      return { points: part.points, normals: part.normals };
    });
}
