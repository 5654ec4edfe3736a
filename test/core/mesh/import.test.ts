import { BoxGeometry, SphereGeometry, TorusGeometry, Triangle, Vector3 } from 'three';
import { describe, expect, it } from 'vitest';
import bunny from 'bunny';
import { finishMesh } from '../../../src/core/mesh/geometry';
import { importBatch, importMesh } from '../../../src/core/mesh/import';
import { MeshImportError } from '../../../src/core/mesh/types';
import { createRng } from '../../../src/core/rng';
import { expectClose } from '../../helpers';
import { asciiStl, cubeTriangles, fixture, fromThree, textBuffer, writeBinaryStl } from '../../meshes';

function importError(buffer: ArrayBuffer, name: string, maxBytes?: number): MeshImportError {
  try {
    importMesh(buffer, name, maxBytes ? { maxBytes } : {});
  } catch (err) {
    expect(err).toBeInstanceOf(MeshImportError);
    return err as MeshImportError;
  }
  throw new Error(`${name} imported without error`);
}

describe('binary STL layout (80-byte header, uint32 count, 50-byte records), files written byte by byte', () => {
  it('reads a cube: area 24 and volume 8 exactly, closed, 12 triangles, 8 welded vertices', () => {
    const part = importMesh(writeBinaryStl(cubeTriangles(), 'made by a test'), 'cube.stl');
    expect(part.info.format).toBe('stl-binary');
    expect(part.info.triangleCount).toBe(12);
    expect(part.info.vertexCount).toBe(8);
    expect(part.info.closed).toBe(true);
    expectClose(part.info.area, 24, { atol: 1e-9 });
    expectClose(part.info.volume!, 8, { atol: 1e-9 });
    expect(part.info.extents).toEqual([2, 2, 2]);
  });
  it('a binary header that begins with "solid" is still binary (the byte length decides)', () => {
    const part = importMesh(writeBinaryStl(cubeTriangles(), 'solid cube exported by a CAD tool'), 'solid-header.stl');
    expect(part.info.format).toBe('stl-binary');
    expectClose(part.info.volume!, 8, { atol: 1e-9 });
  });
  it('a truncated binary STL names the declared and the actual size', () => {
    const whole = writeBinaryStl(cubeTriangles(), 'solid but binary');
    const err = importError(whole.slice(0, whole.byteLength - 30), 'cut.stl');
    expect(err.code).toBe('truncated');
    expect(err.message).toMatch(/^cut\.stl: .*12 triangles/);
    // Without the word "solid" too.
    expect(importError(writeBinaryStl(cubeTriangles(), 'x').slice(0, 200), 'cut2.stl').code).toBe('truncated');
  });
  it('ASCII STL gives the same cube', () => {
    const part = importMesh(textBuffer(asciiStl(cubeTriangles())), 'cube-ascii.stl');
    expect(part.info.format).toBe('stl-ascii');
    expectClose(part.info.volume!, 8, { atol: 1e-9 });
  });
});

describe('bad input: a typed error naming the file and the reason', () => {
  it('empty file', () => {
    const err = importError(new ArrayBuffer(0), 'empty.stl');
    expect(err.code).toBe('empty');
    expect(err.message).toBe('empty.stl: the file is empty (0 bytes)');
  });
  it('text that is not any mesh format', () => {
    expect(importError(textBuffer('Quotation for 40 brackets, net 30 days.\n'), 'quote.stl').code).toBe('unrecognised');
    expect(importError(textBuffer('hello\nworld\n'), 'notes.off').code).toBe('unrecognised');
    expect(importError(textBuffer('hello\nworld\n'), 'notes.obj').code).toBe('unrecognised');
    expect(importError(textBuffer('hello\nworld\n'), 'notes.ply').code).toBe('unrecognised');
  });
  it('NaN and Infinity coordinates', () => {
    const tris = cubeTriangles();
    tris[3][4] = NaN;
    const err = importError(textBuffer(asciiStl(tris)), 'nan.stl');
    expect(err.code).toBe('non-finite');
    expect(importError(textBuffer('v 0 0 0\nv 1 0 Infinity\nv 0 1 0\nf 1 2 3\n'), 'inf.obj').code).toBe('non-finite');
    expect(importError(textBuffer('1 2 3\n4 nan 6\n'), 'scan.xyz').code).toBe('non-finite');
  });
  it('indices out of range', () => {
    const obj = importError(textBuffer('v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 9\n'), 'bad.obj');
    expect(obj.code).toBe('index-out-of-range');
    expect(obj.message).toMatch(/bad\.obj: line 4: .*vertex 9/);
    const off = importError(textBuffer('OFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n3 0 1 7\n'), 'bad.off');
    expect(off.code).toBe('index-out-of-range');
  });
  it('zero-area meshes, while degenerate triangles in a good mesh are skipped and counted', () => {
    const flat = [
      [0, 0, 0, 1, 0, 0, 2, 0, 0],
      [0, 0, 0, 0, 0, 0, 1, 1, 1],
    ];
    expect(importError(writeBinaryStl(flat), 'sliver.stl').code).toBe('zero-area');
    const part = importMesh(writeBinaryStl([...cubeTriangles(), ...flat]), 'cube-with-slivers.stl');
    expect(part.info.degenerateSkipped).toBe(2);
    expect(part.info.triangleCount).toBe(12);
    expect(part.info.closed).toBe(true);
  });
  it('a file over the size cap is refused before parsing', () => {
    const err = importError(writeBinaryStl(cubeTriangles()), 'big.stl', 100);
    expect(err.code).toBe('too-large');
    expect(err.message).toMatch(/684 bytes, over the 100-byte limit/);
  });
  it('an unsupported extension', () => {
    expect(importError(textBuffer('x'), 'drawing.dwg').code).toBe('unsupported-type');
  });
  it('a batch returns the good parts and lists each failure', () => {
    const result = importBatch([
      { name: 'a.stl', buffer: writeBinaryStl(cubeTriangles()) },
      { name: 'b.stl', buffer: new ArrayBuffer(0) },
      { name: 'c.off', buffer: fixture('real-meshes/cube.off') },
      { name: 'd.stl', buffer: textBuffer('not a mesh') },
    ]);
    expect(result.parts.map((p) => p.name)).toEqual(['a.stl', 'c.off']);
    expect(result.failures.map((f) => [f.file, f.code])).toEqual([
      ['b.stl', 'empty'],
      ['d.stl', 'unrecognised'],
    ]);
  });
});

describe('orientation and welding', () => {
  it('inconsistent winding is repaired before the volume is taken', () => {
    const tris = cubeTriangles();
    for (const t of [tris[1], tris[4], tris[7]]) {
      const [x, y, z] = t.slice(3, 6);
      t.splice(3, 3, ...t.slice(6, 9));
      t.splice(6, 3, x, y, z);
    }
    const part = importMesh(writeBinaryStl(tris), 'flipped.stl');
    expectClose(part.info.volume!, 8, { atol: 1e-9 });
  });
  it('a torus with a quarter of its faces flipped at random comes out consistently outward: every edge walked both ways, volume 2π²Rr²', () => {
    const soup = Float32Array.from(new TorusGeometry(2, 0.5, 24, 48).toNonIndexed().getAttribute('position').array);
    const rng = createRng(3);
    for (let t = 0; t < soup.length / 9; t++) {
      if (rng.next() >= 0.25) continue;
      const o = t * 9; // swap corners 1 and 2
      for (let k = 0; k < 3; k++) [soup[o + 3 + k], soup[o + 6 + k]] = [soup[o + 6 + k], soup[o + 3 + k]];
    }
    const part = finishMesh('torus', 'obj', { positions: soup, indices: null, soup: true }, 0);
    expect(part.info.closed).toBe(true);
    const idx = part.mesh.indices!;
    const directed = new Set<string>();
    for (let t = 0; t < idx.length; t += 3)
      for (let e = 0; e < 3; e++) directed.add(`${idx[t + e]}>${idx[t + ((e + 1) % 3)]}`);
    for (const edge of directed) expect(directed.has(edge.split('>').reverse().join('>')), edge).toBe(true);
    expect(directed.size).toBe(idx.length); // no edge walked the same way twice
    // the tessellated torus's volume is a little under the smooth one's (Pappus: 2π²Rr²)
    expectClose(part.info.volume!, 2 * Math.PI ** 2 * 2 * 0.25, { rtol: 0.02 });
  });
  it('a third face on an edge makes a mesh not closed', () => {
    const tris = cubeTriangles();
    tris.push([...tris[0].slice(0, 6), 0, 0, 5]); // shares the first face's first edge
    expect(importMesh(writeBinaryStl(tris), 'fin.stl').info.closed).toBe(false);
  });
  it('an open mesh has no volume', () => {
    const part = importMesh(writeBinaryStl(cubeTriangles().slice(0, 10)), 'open.stl');
    expect(part.info.closed).toBe(false);
    expect(part.info.volume).toBeNull();
  });
});

describe('analytic areas on meshes built by three.js geometry classes (within tessellation error)', () => {
  it('sphere 4πr²', () => {
    const part = fromThree(new SphereGeometry(3, 128, 64), 'sphere');
    expect(part.info.closed).toBe(true);
    expectClose(part.info.area, 4 * Math.PI * 9, { rtol: 2e-3 });
    expectClose(part.info.volume!, (4 / 3) * Math.PI * 27, { rtol: 3e-3 });
  });
  it('torus 4π²Rr and volume 2π²Rr²', () => {
    const part = fromThree(new TorusGeometry(2, 0.5, 64, 128), 'torus');
    expect(part.info.closed).toBe(true);
    expectClose(part.info.area, 4 * Math.PI ** 2 * 2 * 0.5, { rtol: 2e-3 });
    expectClose(part.info.volume!, 2 * Math.PI ** 2 * 2 * 0.25, { rtol: 3e-3 });
  });
  it('box 2(ab + bc + ca) and volume abc, exactly', () => {
    const part = fromThree(new BoxGeometry(1.5, 2, 3.25), 'box');
    expectClose(part.info.area, 2 * (1.5 * 2 + 2 * 3.25 + 3.25 * 1.5), { rtol: 1e-6 });
    expectClose(part.info.volume!, 1.5 * 2 * 3.25, { rtol: 1e-6 });
  });
});

describe('real files nobody here wrote (CGAL example data, CC0; test/fixtures/real-meshes)', () => {
  it('the 2×2×2 cube (OFF) gives area 24 and volume 8; the quad version has the same extents', () => {
    const cube = importMesh(fixture('real-meshes/cube.off'), 'cube.off');
    expectClose(cube.info.area, 24, { atol: 1e-9 });
    expectClose(cube.info.volume!, 8, { atol: 1e-9 });
    const quad = importMesh(fixture('real-meshes/cube_quad.off'), 'cube_quad.off');
    expectClose(quad.info.extents, cube.info.extents, { atol: 1e-9 });
    expectClose(quad.info.area, 24, { atol: 1e-9 });
  });
  it('the same sphere in OFF, ASCII PLY and binary STL gives the same area and volume, near 4πr² and 4/3πr³', () => {
    const off = importMesh(fixture('real-meshes/sphere.off'), 'sphere.off');
    const ply = importMesh(fixture('real-meshes/sphere.ply'), 'sphere.ply');
    const stl = importMesh(fixture('real-meshes/sphere.stl'), 'sphere.stl');
    expect(stl.info.format).toBe('stl-binary');
    for (const p of [ply, stl]) {
      expectClose(p.info.area, off.info.area, { rtol: 1e-5 });
      expectClose(p.info.volume!, off.info.volume!, { rtol: 1e-5 });
      expect(p.info.triangleCount).toBe(off.info.triangleCount);
    }
    // An icosphere of radius 0.5 with 320 faces is inscribed: a few per cent under the smooth sphere.
    expectClose(off.info.area, 4 * Math.PI * 0.25, { rtol: 0.03 });
    expectClose(off.info.volume!, (4 / 3) * Math.PI * 0.125, { rtol: 0.05 });
  });
  it('PLY with extra properties, vertex-only PLY, COFF with colours, and XYZ point lists', () => {
    const tetra = importMesh(fixture('real-meshes/colored_tetra.ply'), 'colored_tetra.ply');
    expect(tetra.info.triangleCount).toBe(4);
    const pts = importMesh(fixture('real-meshes/example.ply'), 'example.ply');
    expect(pts.mesh.indices).toBeNull();
    expect(pts.info.vertexCount).toBe(3);
    const cactus = importMesh(fixture('real-meshes/cactus.off'), 'cactus.off');
    expect(cactus.info.triangleCount).toBeGreaterThan(100);
    // Line counts by `wc -l`: 1050 and 1000 points.
    expect(importMesh(fixture('real-meshes/sphere_1k.xyz'), 'sphere_1k.xyz').info.vertexCount).toBe(1050);
    expect(importMesh(fixture('real-meshes/oneK.xyz'), 'oneK.xyz').info.vertexCount).toBe(1000);
  });
  it('closed CAD-like parts (pinion, joint) are watertight with positive volume', () => {
    for (const name of ['pinion.off', 'joint.off']) {
      const part = importMesh(fixture(`real-meshes/${name}`), name);
      expect(part.info.closed, name).toBe(true);
      expect(part.info.volume!, name).toBeGreaterThan(0);
    }
  });
});

describe('PLY binary little- and big-endian, written byte by byte', () => {
  function binaryPly(littleEndian: boolean): ArrayBuffer {
    const tris = cubeTriangles();
    const verts: number[][] = [];
    const faces: number[][] = [];
    const key = (v: number[]) => v.join(',');
    const seen = new Map<string, number>();
    for (const t of tris) {
      const f: number[] = [];
      for (let k = 0; k < 3; k++) {
        const v = t.slice(k * 3, k * 3 + 3);
        if (!seen.has(key(v))) {
          seen.set(key(v), verts.length);
          verts.push(v);
        }
        f.push(seen.get(key(v))!);
      }
      faces.push(f);
    }
    const header =
      `ply\nformat binary_${littleEndian ? 'little' : 'big'}_endian 1.0\nelement vertex ${verts.length}\n` +
      'property float x\nproperty float y\nproperty float z\n' +
      `element face ${faces.length}\nproperty list uchar int vertex_indices\nend_header\n`;
    const head = new TextEncoder().encode(header);
    const body = new ArrayBuffer(verts.length * 12 + faces.length * 13);
    const view = new DataView(body);
    let o = 0;
    for (const v of verts)
      for (const c of v) {
        view.setFloat32(o, c, littleEndian);
        o += 4;
      }
    for (const f of faces) {
      view.setUint8(o, 3);
      o += 1;
      for (const i of f) {
        view.setInt32(o, i, littleEndian);
        o += 4;
      }
    }
    const out = new Uint8Array(head.length + body.byteLength);
    out.set(head, 0);
    out.set(new Uint8Array(body), head.length);
    return out.buffer;
  }
  it.each([true, false])('little endian = %s: area 24, volume 8', (le) => {
    const part = importMesh(binaryPly(le), 'cube.ply');
    expectClose(part.info.area, 24, { atol: 1e-9 });
    expectClose(part.info.volume!, 8, { atol: 1e-9 });
  });
  it('a truncated binary PLY is reported, not read as garbage', () => {
    const whole = binaryPly(true);
    const err = importError(whole.slice(0, whole.byteLength - 40), 'cut.ply');
    expect(['truncated', 'parse-failed', 'non-finite', 'index-out-of-range']).toContain(err.code);
  });
});

describe('a real mesh from the npm registry (the Stanford bunny, package "bunny")', () => {
  const positions = Float32Array.from(bunny.positions.flat());
  const indices = Uint32Array.from(bunny.cells.flat());
  const part = finishMesh('bunny', 'obj', { positions, indices }, 0);
  it('imports, and its area equals the sum of three.js Triangle.getArea', () => {
    const tri = new Triangle();
    let reference = 0;
    for (const [a, b, c] of bunny.cells) {
      tri.set(
        new Vector3(...bunny.positions[a]),
        new Vector3(...bunny.positions[b]),
        new Vector3(...bunny.positions[c]),
      );
      reference += tri.getArea();
    }
    expect(part.info.triangleCount).toBeGreaterThan(3000);
    expectClose(part.info.area, reference, { rtol: 1e-4 });
  });
});

describe('OBJ: n-gons, negative indices and groups', () => {
  it('faces survive polyline records in the same object (OBJLoader alone would keep only lines)', () => {
    const text = [
      'o part',
      'v 0 0 0',
      'v 1 0 0',
      'v 0 1 0',
      'v 0 0 1',
      'f 1 3 2',
      'f 1 2 4',
      'l 1 2',
      'f 1 4 3',
      'f 2 3 4',
    ].join('\n');
    const part = importMesh(textBuffer(text), 'with-lines.obj');
    expect(part.info.triangleCount).toBe(4);
    expectClose(part.info.volume!, 1 / 6, { atol: 1e-9 });
  });
  it('a cube written as quads with relative indices', () => {
    const text = [
      'o cube',
      'v -1 -1 -1',
      'v 1 -1 -1',
      'v 1 1 -1',
      'v -1 1 -1',
      'v -1 -1 1',
      'v 1 -1 1',
      'v 1 1 1',
      'v -1 1 1',
      'g bottom',
      'f -8 -5 -6 -7',
      'g top',
      'f 5 6 7 8',
      'f 1 2 6 5',
      'f 2 3 7 6',
      'f 3 4 8 7',
      'f 4 1 5 8',
    ].join('\n');
    const part = importMesh(textBuffer(text), 'cube.obj');
    expect(part.info.triangleCount).toBe(12);
    expectClose(part.info.volume!, 8, { atol: 1e-9 });
  });
});
