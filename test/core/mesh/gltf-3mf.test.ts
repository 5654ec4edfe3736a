// glTF 2.0 and 3MF, written here per their specifications and read back: sizes in millimetres from the
// formats' own units (glTF: metres, specification 3.4; 3MF: the model's unit attribute, core specification),
// checked against three.js (BoxGeometry, Matrix4.compose, and its GLTFLoader on the same file).

import { Matrix4, Quaternion, Vector3, Mesh as ThreeMesh, type BufferGeometry, type Object3D } from 'three';
import { GLTFLoader } from 'three/examples/jsm/loaders/GLTFLoader.js';
import { describe, expect, it } from 'vitest';
import { importMesh } from '../../../src/core/mesh/import';
import { MeshImportError } from '../../../src/core/mesh/types';
import { expectClose } from '../../helpers';
import { textBuffer } from '../../meshes';
import { cubeObject, write3mf, writeGltf } from '../../format-writers';
import { RAW_JS } from './reasons';

function loadWithThree(buffer: ArrayBuffer): Promise<Object3D> {
  return new Promise((resolve, reject) => new GLTFLoader().parse(buffer, '', (g) => resolve(g.scene), reject));
}

describe('glTF 2.0 (metres) read into millimetres', () => {
  it('a 1 m cube as .glb and as .gltf: 1000 mm across, area 6·10⁶ mm², volume 10⁹ mm³, closed', () => {
    for (const [binary, name] of [
      [true, 'box.glb'],
      [false, 'box.gltf'],
    ] as const) {
      const part = importMesh(writeGltf({}, binary), name);
      expect([part.info.format, part.info.units, part.info.closed, part.info.bodies]).toEqual(['gltf', 'mm', true, 1]);
      expectClose(part.info.extents, [1000, 1000, 1000], { rtol: 1e-6 });
      expectClose(part.info.area, 6e6, { rtol: 1e-6 });
      expectClose(part.info.volume!, 1e9, { rtol: 1e-6 });
    }
  });
  it("a node's translation, rotation and scale place the mesh as three's Matrix4.compose does, and as GLTFLoader reads it", async () => {
    const t = [0.2, -0.1, 3],
      q = new Quaternion().setFromAxisAngle(new Vector3(1, 2, 3).normalize(), 0.7),
      s = [2, 0.5, 1.5];
    const file = writeGltf({ translation: t, rotation: [q.x, q.y, q.z, q.w], scale: s }, true);
    const part = importMesh(file, 'turned.glb');
    const m = new Matrix4().compose(new Vector3(...t), q, new Vector3(...s));
    const corners = [-0.5, 0.5].flatMap((x) =>
      [-0.5, 0.5].flatMap((y) => [-0.5, 0.5].map((z) => new Vector3(x, y, z).applyMatrix4(m))),
    );
    const min = [0, 1, 2].map((k) => Math.min(...corners.map((c) => c.getComponent(k)))),
      max = [0, 1, 2].map((k) => Math.max(...corners.map((c) => c.getComponent(k))));
    expectClose(
      part.info.bboxMin,
      min.map((v) => v * 1000),
      { atol: 1e-3 },
    );
    expectClose(
      part.info.bboxMax,
      max.map((v) => v * 1000),
      { atol: 1e-3 },
    );
    expectClose(part.info.volume!, 2 * 0.5 * 1.5 * 1e9, { rtol: 1e-5 });
    // GLTFLoader on the same bytes: the same world-space bounding box (in metres).
    const scene = await loadWithThree(file);
    scene.updateMatrixWorld(true);
    let mesh: ThreeMesh | null = null;
    scene.traverse((o) => {
      if (o instanceof ThreeMesh) mesh = o;
    });
    const g = (mesh as unknown as ThreeMesh).geometry as BufferGeometry;
    g.applyMatrix4((mesh as unknown as ThreeMesh).matrixWorld);
    g.computeBoundingBox();
    expectClose(
      part.info.bboxMin,
      g.boundingBox!.min.toArray().map((v) => v * 1000),
      { atol: 1e-3 },
    );
  });
  it('external buffers, compressed geometry, lying counts and other versions get reasons in our words', () => {
    const json = JSON.parse(new TextDecoder().decode(new Uint8Array(writeGltf({}, false))));
    const cases: [object, RegExp][] = [
      [{ ...json, buffers: [{ uri: 'box.bin', byteLength: 10 }] }, /external file "box\.bin"/],
      [{ ...json, extensionsRequired: ['KHR_draco_mesh_compression'] }, /compressed/],
      [{ ...json, accessors: [{ ...json.accessors[0], count: 1e9 }, json.accessors[1]] }, /truncated or inconsistent/],
      [{ ...json, asset: { version: '1.0' } }, /not glTF 2\.0/],
      [{ ...json, nodes: [{ mesh: 0, children: [0] }] }, /appears twice/],
    ];
    for (const [doc, reason] of cases) {
      let err: unknown = null;
      try {
        importMesh(textBuffer(JSON.stringify(doc)), 'odd.gltf');
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(MeshImportError);
      expect((err as MeshImportError).reason).toMatch(reason);
      expect((err as MeshImportError).reason).not.toMatch(RAW_JS);
    }
  });
});

describe('3MF (core specification) in its stated unit', () => {
  const model = (unit: string, resources: string, build: string) =>
    `<?xml version="1.0" encoding="UTF-8"?><model unit="${unit}" xml:lang="en-US" xmlns="http://schemas.microsoft.com/3dmanufacturing/core/2015/02"><resources>${resources}</resources><build>${build}</build></model>`;
  it('a 1-inch cube placed by its build item reads as 25.4 mm across, volume 25.4³ mm³, at the placed spot', () => {
    const part = importMesh(
      write3mf(model('inch', cubeObject(1), '<item objectid="1" transform="1 0 0 0 1 0 0 0 1 10 0 0"/>')),
      'cube.3mf',
    );
    expect([part.info.format, part.info.units, part.info.closed]).toEqual(['3mf', 'mm', true]);
    expectClose(part.info.extents, [25.4, 25.4, 25.4], { rtol: 1e-6 });
    expectClose(part.info.volume!, 25.4 ** 3, { rtol: 1e-5 });
    expectClose(part.info.bboxMin, [254, 0, 0], { atol: 1e-3 });
  });
  it('an object built from two components, each placed by its own transform, in millimetres by default', () => {
    const resources =
      cubeObject(1) +
      '<object id="2" type="model"><components><component objectid="1"/><component objectid="1" transform="2 0 0 0 1 0 0 0 1 0 0 5"/></components></object>';
    const part = importMesh(write3mf(model('millimeter', resources, '<item objectid="2"/>')), 'pair.3mf');
    expect(part.info.bodies).toBe(2);
    expectClose(part.info.extents, [2, 1, 6], { rtol: 1e-6 });
    expectClose(part.info.area, 6 + (2 * 2 + 2 * 2 + 2 * 1), { rtol: 1e-6 });
  });
  it('not a ZIP, a missing object, an unknown unit and a triangle off the vertex list get reasons in our words', () => {
    const cases: [ArrayBuffer, RegExp][] = [
      [textBuffer('solid cube\nendsolid\n'), /not a ZIP package/],
      [write3mf(model('millimeter', cubeObject(1), '<item objectid="7"/>')), /object 7, which does not exist/],
      [write3mf(model('cubit', cubeObject(1), '<item objectid="1"/>')), /unknown unit "cubit"/],
      [
        write3mf(model('millimeter', cubeObject(1).replace('v3="2"', 'v3="999"'), '<item objectid="1"/>')),
        /triangle on vertex 999/,
      ],
    ];
    for (const [buffer, reason] of cases) {
      let err: unknown = null;
      try {
        importMesh(buffer, 'odd.3mf');
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(MeshImportError);
      expect((err as MeshImportError).reason).toMatch(reason);
      expect((err as MeshImportError).reason).not.toMatch(RAW_JS);
    }
  });
});
