// Files that lie, are cut off, or are legal but unusual: each gets a typed error in our words (or is read
// right), fast, with nothing printed. One test per case found by hand and by mutation; the readers are
// checked against three.js's own PLY and OBJ loaders on valid files (a general-purpose reference).

import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { PLYLoader } from 'three/examples/jsm/loaders/PLYLoader.js';
import { OBJLoader } from 'three/examples/jsm/loaders/OBJLoader.js';
import { Mesh as ThreeMesh, type BufferGeometry } from 'three';
import { importMesh } from '../../../src/core/mesh/import';
import { MeshImportError } from '../../../src/core/mesh/types';
import { surfaceArea } from '../../../src/core/mesh/geometry';
import { expectClose } from '../../helpers';
import { fixture, textBuffer } from '../../meshes';
import { RAW_JS } from './reasons';

function importError(buffer: ArrayBuffer, name: string): MeshImportError {
  try {
    importMesh(buffer, name);
  } catch (err) {
    expect(err).toBeInstanceOf(MeshImportError);
    return err as MeshImportError;
  }
  throw new Error(`${name} imported without error`);
}

const PLY_HEAD =
  'ply\nformat ascii 1.0\nelement vertex 4\nproperty float x\nproperty float y\nproperty float z\nelement face 4\nproperty list uchar int vertex_indices\nend_header\n';
const TETRA_BODY = '0 0 0\n1 0 0\n0 1 0\n0 0 1\n3 0 2 1\n3 0 1 3\n3 0 3 2\n3 1 2 3\n';

let printed: string[] = [];
beforeEach(() => {
  printed = [];
  const keep = (...a: unknown[]) => {
    printed.push(a.map(String).join(' '));
    return true;
  };
  for (const m of ['log', 'warn', 'error', 'info', 'debug'] as const) vi.spyOn(console, m).mockImplementation(keep);
  vi.spyOn(process.stdout, 'write').mockImplementation(keep);
  vi.spyOn(process.stderr, 'write').mockImplementation(keep);
});
afterEach(() => {
  vi.restoreAllMocks();
  expect(printed, 'a reader printed something').toEqual([]);
});

describe('PLY headers that lie or are malformed', () => {
  it('an element with no properties and a huge count fails at once instead of looping over the count', () => {
    for (const format of ['ascii', 'binary_little_endian']) {
      const text = `ply\nformat ${format} 1.0\nelement vertex 3\nproperty float x\nproperty float y\nproperty float z\nelement junk 9007199254740991\nend_header\n0 0 0\n1 0 0\n0 1 0\n`;
      const t0 = performance.now();
      const err = importError(textBuffer(text), 'junk.ply');
      expect(performance.now() - t0).toBeLessThan(1000); // a hang guard, not a speed target
      expect(err.reason).toMatch(/"junk" declares 9007199254740991 entries but no properties/);
    }
  });
  it('counts larger than the bytes (binary) or lines (ASCII) left are "truncated", before anything is allocated', () => {
    const binary =
      'ply\nformat binary_little_endian 1.0\nelement vertex 1000000000\nproperty float x\nproperty float y\nproperty float z\nend_header\n' +
      'x'.repeat(36);
    expect(importError(textBuffer(binary), 'lying.ply').code).toBe('truncated');
    const ascii = PLY_HEAD.replace('element face 4', 'element face 100000000') + TETRA_BODY;
    const err = importError(textBuffer(ascii), 'lying-ascii.ply');
    expect(err.code).toBe('truncated');
    expect(err.reason).toMatch(/declares 100000004 entries .* but the body has 8 lines/);
  });
  it('ASCII PLY cut off inside the vertices or the faces is "truncated", not other geometry', () => {
    const whole = PLY_HEAD + TETRA_BODY;
    expect(importMesh(textBuffer(whole), 'tetra.ply').info.triangleCount).toBe(4);
    const lines = whole.split('\n');
    const inVertices = lines.slice(0, 11).join('\n') + '\n'; // header + 2 vertices
    const inFaces = lines.slice(0, 15).join('\n') + '\n'; // header + 4 vertices + 2 faces
    expect(importError(textBuffer(inVertices), 'cut-v.ply').code).toBe('truncated');
    expect(importError(textBuffer(inFaces), 'cut-f.ply').code).toBe('truncated');
    // More lines than declared is also a mismatch, never read silently.
    expect(importError(textBuffer(whole + '3 0 1 2\n'), 'extra.ply').reason).toMatch(/counts do not match/);
  });
  it('a property before any element, an unknown property type and an unknown format get reasons in our words', () => {
    const cases: [string, RegExp][] = [
      [
        'ply\nformat ascii 1.0\nproperty float x\nelement vertex 1\nend_header\n0\n',
        /property comes before any element/,
      ],
      [
        'ply\nformat ascii 1.0\nelement vertex 1\nproperty float128 x\nend_header\n0\n',
        /unknown property type "float128"/,
      ],
      ['ply\nformat ebcdic 1.0\nelement vertex 1\nproperty float x\nend_header\n0\n', /unknown format "ebcdic"/],
      ['ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\n', /no "end_header"/],
      ['ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\nend_header\n0\n', /lack an x, y or z/],
    ];
    for (const [text, reason] of cases) {
      const err = importError(textBuffer(text), 'odd.ply');
      expect(err.reason).toMatch(reason);
      expect(err.reason).not.toMatch(RAW_JS);
    }
  });
  it('valid files read the same as three.js PLYLoader reads them (CGAL fixtures and a binary cube)', () => {
    for (const name of ['sphere.ply', 'colored_tetra.ply']) {
      const buffer = fixture(`real-meshes/${name}`);
      const ours = importMesh(buffer, name);
      const geometry = new PLYLoader().parse(buffer);
      expectClose(ours.info.area, areaOf(geometry), { rtol: 1e-6 });
    }
  });
});

describe('OFF whose header does not match its data', () => {
  const cube = new TextDecoder().decode(new Uint8Array(fixture('real-meshes/cube.off')));
  const [head, counts, ...rest] = cube.split('\n').filter((l) => l.trim() && !l.trim().startsWith('#'));
  const [v, f] = counts.split(/\s+/).map(Number);
  it('the real cube reads (8 vertices, 12 triangles)', () => {
    expect([v, f]).toEqual([8, 12]);
    expect(importMesh(fixture('real-meshes/cube.off'), 'cube.off').info.triangleCount).toBe(12);
  });
  it.each([
    ['understated vertices', `${v - 2} ${f} 0`],
    ['overstated vertices', `${v + 2} ${f} 0`],
    ['understated faces', `${v} ${f - 4} 0`],
    ['overstated faces', `${v} ${f + 1} 0`],
  ])('%s: an error, never different geometry', (_what, wrong) => {
    const text = [head, wrong, ...rest].join('\n') + '\n';
    const err = importError(textBuffer(text), 'cube.off');
    expect(['truncated', 'parse-failed']).toContain(err.code);
    expect(err.reason).toMatch(/counts|truncated|ends after/);
  });
});

describe('point lists', () => {
  it('semicolon-separated values with decimal commas are read as the locale writes them: 1,5 is 1.5', () => {
    const part = importMesh(textBuffer('x;y;z\n1,5;2,5;3,5\n0;0;0\n-1,25;4;1e1\n'), 'scan.csv');
    expectClose(part.mesh.positions, [1.5, 2.5, 3.5, 0, 0, 0, -1.25, 4, 10], { atol: 1e-6 });
  });
  it('a typo in the first data line is an error; only a line with no number at all is a header', () => {
    const err = importError(textBuffer('1 2 3a\n4 5 6\n'), 'scan.xyz');
    expect(err.reason).toMatch(/line 1 is not a point/);
    expect(importMesh(textBuffer('x y z\n1 2 3\n4 5 6\n'), 'scan.xyz').info.vertexCount).toBe(2);
  });
  it('separators may not change within a file', () => {
    expect(importError(textBuffer('1 2 3\n4,5,6\n'), 'mixed.xyz').reason).toMatch(/mixes separators/);
  });
});

describe('OBJ', () => {
  it('indented vertex and face lines are legal and read', () => {
    const text = '  v 0 0 0\n\tv 1 0 0\n  v 0 1 0\n   v 0 0 1\n f 1 3 2\n f 1 2 4\n\tf 1 4 3\n  f 2 3 4\n';
    const part = importMesh(textBuffer(text), 'indented.obj');
    expect(part.info.triangleCount).toBe(4);
    expectClose(part.info.volume!, 1 / 6, { atol: 1e-9 });
  });
  it('continued lines, v/t/n references and n-gons read as OBJLoader reads them (area agrees)', () => {
    const text = [
      'mtllib parts.mtl',
      'o plate',
      'v 0 0 0',
      'v 2 0 0',
      'v 2 1 0',
      'v 0 1 0',
      'vt 0 0',
      'vn 0 0 1',
      'usemtl steel',
      's off',
      'f 1/1/1 2/1/1 \\',
      '3/1/1 4/1/1',
      'v 0 0 1',
      'f -1//1 -5//1 -4//1',
    ].join('\n');
    const ours = importMesh(textBuffer(text), 'plate.obj');
    const reference = new OBJLoader().parse(text.replace('\\\n', ''));
    let area = 0;
    reference.traverse((c) => {
      if (c instanceof ThreeMesh) area += areaOf(c.geometry as BufferGeometry);
    });
    expect(ours.info.triangleCount).toBe(3);
    expectClose(ours.info.area, area, { rtol: 1e-6 });
  });
  it('200,000 empty object and group lines cost nothing; a face repeated 200,000 times is kept in typed arrays', () => {
    const empty = 'o a\ng b\n'.repeat(100_000) + 'v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\n';
    expect(importMesh(textBuffer(empty), 'empty-groups.obj').info.triangleCount).toBe(1);
    const repeated = 'v 0 0 0\nv 1 0 0\nv 0 1 0\n' + 'f 1 2 3\n'.repeat(200_000);
    const part = importMesh(textBuffer(repeated), 'repeated.obj');
    expect(part.info.triangleCount).toBe(200_000);
    expect(part.mesh.indices).toBeInstanceOf(Uint32Array);
  });
  it('a face of two corners is skipped as three.js OBJLoader skips it; a reference that is not a number names the line', () => {
    // Real exports write them (5 of the 152 furniture validation files, e.g. "f 227 209").
    const text = 'v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2\nf 1 2 3\nf 3 1\n';
    const reference = new OBJLoader().parse(text);
    let triangles = 0;
    reference.traverse((c) => {
      if (c instanceof ThreeMesh) triangles += (c.geometry as BufferGeometry).getAttribute('position').count / 3;
    });
    expect(triangles).toBe(1);
    expect(importMesh(textBuffer(text), 'short.obj').info.triangleCount).toBe(triangles);
    expect(importError(textBuffer('v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 x 3\n'), 'bad.obj').reason).toMatch(
      /line 4: "x" is not a vertex reference/,
    );
  });
});

function areaOf(geometry: BufferGeometry): number {
  const g = geometry.index ? geometry.toNonIndexed() : geometry;
  const p = Float32Array.from(g.getAttribute('position').array as ArrayLike<number>);
  return surfaceArea({ positions: p, indices: Uint32Array.from({ length: p.length / 3 }, (_, i) => i) });
}
