// VRML 2.0 (VRML97, ISO/IEC 14772) through three.js's VRMLLoader: every shape's faces, placed by its
// transforms, in one part. VRML has no unit of its own (the standard says metres, but exporters write
// what they like: KiCad writes tenths of an inch), so sizes stay in file units.

import { Mesh as ThreeMesh, Vector3, type BufferGeometry } from 'three';
import { VRMLLoader } from 'three/examples/jsm/loaders/VRMLLoader.js';
import { finishMesh } from './geometry';
import { MeshImportError, type ImportedMesh } from './types';

/** Runs a third-party parser with the console silenced (three's loaders warn on unknown nodes), keeping what it said. */
export function quietly<T>(fn: () => T): { value: T; said: string[] } {
  const said: string[] = [];
  const keep = (...a: unknown[]) => {
    if (said.length < 20) said.push(a.map(String).join(' '));
  };
  const was = { log: console.log, warn: console.warn, error: console.error };
  Object.assign(console, { log: keep, warn: keep, error: keep });
  try {
    return { value: fn(), said };
  } finally {
    Object.assign(console, was);
  }
}

export function parseVrml(text: string, file: string, fileBytes: number): ImportedMesh {
  if (!/^#VRML V2\.0/.test(text.trimStart())) {
    const head = text.trimStart().slice(0, 12);
    throw new MeshImportError(
      file,
      'unrecognised',
      head.startsWith('#VRML V1')
        ? 'VRML 1.0 is not read (only VRML 2.0 / VRML97)'
        : 'not a VRML 2.0 file: it does not begin with "#VRML V2.0"',
    );
  }
  let scene;
  try {
    scene = quietly(() => new VRMLLoader().parse(text, '')).value;
  } catch (err) {
    // The grammar's own messages say where the syntax broke; a JavaScript error means a node lacks what it needs.
    const runtime = err instanceof TypeError || err instanceof RangeError || err instanceof ReferenceError;
    const detail = runtime
      ? 'a node is missing a field it needs or refers to a name never defined'
      : String((err as Error)?.message ?? err)
          .split('\n')[0]
          .slice(0, 120);
    throw new MeshImportError(file, 'parse-failed', `VRML could not be parsed (${detail})`);
  }
  scene.updateMatrixWorld(true);
  const chunks: Float32Array[] = [];
  let bodies = 0;
  const v = new Vector3();
  scene.traverse((child) => {
    if (!(child instanceof ThreeMesh)) return;
    const g = child.geometry as BufferGeometry;
    const flat = g.index ? g.toNonIndexed() : g;
    const p = flat.getAttribute('position');
    if (!p || p.count < 3) return;
    const out = new Float32Array(p.count * 3);
    for (let i = 0; i < p.count; i++) {
      v.fromBufferAttribute(p, i).applyMatrix4(child.matrixWorld);
      out[i * 3] = v.x;
      out[i * 3 + 1] = v.y;
      out[i * 3 + 2] = v.z;
    }
    chunks.push(out.subarray(0, Math.floor(p.count / 3) * 9));
    bodies++;
  });
  if (bodies === 0)
    throw new MeshImportError(file, 'no-geometry', 'VRML holds no faces (no IndexedFaceSet or primitive shapes)');
  const positions = new Float32Array(chunks.reduce((s, c) => s + c.length, 0));
  let o = 0;
  for (const c of chunks) {
    positions.set(c, o);
    o += c.length;
  }
  const part = finishMesh(file, 'vrml', { positions, indices: null, soup: true }, fileBytes);
  return { ...part, info: { ...part.info, bodies } };
}
