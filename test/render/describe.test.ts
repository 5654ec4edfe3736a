// Objects handed to the view worker as plain arrays come back as the same geometry, placement and material.

import { describe, expect, it } from 'vitest';
import { Matrix4, Mesh, MeshStandardMaterial, Points, Vector3, type Material } from 'three';
import {
  alignToFrame,
  buildObject,
  describeObject,
  materialFromKey,
  meshObject,
  PALETTE,
  pointsObject,
  viewTransfers,
} from '../../src/render/scene';

describe('an object described for the view worker and built again', () => {
  it('a turned mesh keeps its vertices, faces, placement and (shared) material', () => {
    // A unit right triangle at z = 0, centred at the origin with radius 1.
    const mesh = meshObject(
      Float32Array.from([0, 0, 0, 1, 0, 0, 0, 1, 0]),
      Uint32Array.from([0, 1, 2]),
      [0, 0, 0],
      1,
      PALETTE.teal,
    );
    alignToFrame(mesh, [0, -1, 0, 1, 0, 0, 0, 0, 1]); // a quarter turn about z
    const parts = describeObject(mesh);
    expect(parts).toHaveLength(1);
    // position and index: no colours, and no normals (flat shading takes them from the face, three.js
    // normal_fragment_begin)
    expect(viewTransfers(parts)).toHaveLength(2);
    expect((mesh.material as MeshStandardMaterial).flatShading).toBe(true);
    const back = buildObject(parts).children[0] as Mesh;
    expect(Array.from(back.geometry.getAttribute('position').array)).toEqual([0, 0, 0, 1, 0, 0, 0, 1, 0]);
    expect(Array.from(back.geometry.index!.array)).toEqual([0, 1, 2]);
    expect(back.geometry.getAttribute('normal')).toBeUndefined();
    expect(back.material).toBe(mesh.material); // the same shared material, by its key
    back.updateMatrixWorld(true);
    // (1, 0, 0) turned a quarter about z is (0, 1, 0) (right-hand rule).
    const v = new Vector3(1, 0, 0).applyMatrix4(back.matrixWorld);
    expect([v.x, v.y, v.z].map((x) => Math.round(x * 1e6) / 1e6)).toEqual([0, 1, 0]);
    expect(back.matrixWorld.equals(new Matrix4().fromArray(parts[0].matrix))).toBe(true);
  });

  it('points keep their colours; a key names its material, and an unknown key is refused', () => {
    const pts = pointsObject(Float32Array.from([0, 0, 0, 0, 0, 1]), 0.05);
    const back = buildObject(describeObject(pts)).children[0] as Points;
    expect(Array.from(back.geometry.getAttribute('color').array)).toEqual(
      Array.from(pts.geometry.getAttribute('color').array),
    );
    expect(back.material).toBe(pts.material);
    expect(materialFromKey((pts.material as Material).userData.key as string)).toBe(pts.material);
    expect(() => materialFromKey('cloth:1')).toThrow(/no material/);
  });
});
