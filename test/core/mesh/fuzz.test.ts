// Seeded mutation fuzzing of every format the importer reads: small valid files are cut, flipped, spliced and
// given lying numbers, then imported and sampled. Each input must end in either finite geometry with indices
// in range or a MeshImportError whose reason is in our words — never another exception, never a hang, never
// a line printed. Bounded: a fixed count of inputs per format (a few seconds in all).

import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { createRng, type Rng } from '../../../src/core/rng';
import { loadPart } from '../../../src/core/library';
import { loadCadReader } from '../../../src/core/mesh/occt';
import { MeshImportError } from '../../../src/core/mesh/types';
import { asciiStl, cubeTriangles, fixture, textBuffer, writeBinaryStl } from '../../meshes';
import { RAW_JS } from './reasons';
import { cubeObject, write3mf, writeGltf } from '../../format-writers';

const MUTATIONS_PER_FILE = Number(process.env.FUZZ_MUTATIONS ?? 250);
/** Far above any small file's import time here (a few ms): it only catches a loop that runs away. */
const HANG_GUARD_MS = 2000;

function binaryPly(littleEndian: boolean): ArrayBuffer {
  const tris = cubeTriangles().slice(0, 4);
  const header =
    `ply\nformat binary_${littleEndian ? 'little' : 'big'}_endian 1.0\nelement vertex ${tris.length * 3}\n` +
    'property float x\nproperty float y\nproperty float z\nproperty uchar red\n' +
    `element face ${tris.length}\nproperty list uchar int vertex_indices\nend_header\n`;
  const head = new TextEncoder().encode(header);
  const out = new Uint8Array(head.length + tris.length * 3 * 13 + tris.length * 13);
  out.set(head);
  const view = new DataView(out.buffer);
  let o = head.length;
  for (const t of tris)
    for (let v = 0; v < 3; v++) {
      for (let k = 0; k < 3; k++) {
        view.setFloat32(o, t[v * 3 + k], littleEndian);
        o += 4;
      }
      view.setUint8(o++, 200);
    }
  tris.forEach((_, f) => {
    view.setUint8(o++, 3);
    for (let k = 0; k < 3; k++) {
      view.setInt32(o, f * 3 + k, littleEndian);
      o += 4;
    }
  });
  return out.buffer;
}

const SEEDS: [string, () => ArrayBuffer][] = [
  ['cube.stl', () => writeBinaryStl(cubeTriangles(), 'solid but binary')],
  ['cube-ascii.stl', () => textBuffer(asciiStl(cubeTriangles().slice(0, 4)))],
  [
    'tetra.obj',
    () =>
      textBuffer(
        '# tetra\no t\nv 0 0 0\nv 1 0 0\nv 0 1 0\nv 0 0 1\nvn 0 0 1\nf 1//1 3//1 2//1\nf 1 2 4\nf -4 -1 -2\nf 2 3 4\n',
      ),
  ],
  ['tetra.ply', () => fixture('real-meshes/colored_tetra.ply')],
  ['cube-le.ply', () => binaryPly(true)],
  ['cube-be.ply', () => binaryPly(false)],
  ['cube.off', () => fixture('real-meshes/cube.off')],
  ['points.xyz', () => textBuffer('# scan\n0 0 0\n1 0 0 0 0 1\n0 1 0\n0 0 1\n0.5 0.5 0.5\n')],
  ['points.csv', () => textBuffer('x;y;z\n0;0;0\n1,5;0;0\n0;1;0\n0;0;1\n')],
  ['box.glb', () => writeGltf({ translation: [0, 1, 2] }, true)],
  ['box.gltf', () => writeGltf({ scale: [1, 2, 3] }, false)],
  [
    'cube.3mf',
    () =>
      write3mf(
        `<?xml version="1.0"?><model unit="inch" xmlns="http://schemas.microsoft.com/3dmanufacturing/core/2015/02"><resources>${cubeObject(1)}</resources><build><item objectid="1"/></build></model>`,
      ),
  ],
  ['led.wrl', () => fixture('kicad/LED_01005_0402Metric.wrl')],
  ['led.step', () => fixture('kicad/LED_01005_0402Metric.step')],
];
/** OpenCascade takes tens of milliseconds a file: fewer mutations of the STEP file keep the test to seconds. */
const MUTATIONS_FOR = (name: string) =>
  name.endsWith('.step') ? Math.ceil(MUTATIONS_PER_FILE / 4) : MUTATIONS_PER_FILE;

const NUMBERS = [
  '0',
  '-1',
  '4294967295',
  '9007199254740991',
  '1e308',
  '-1e-320',
  'nan',
  'inf',
  '1.5',
  '999999999',
  '',
  'x',
];

function mutate(src: Uint8Array, rng: Rng): Uint8Array {
  const b = Array.from(src);
  const rounds = 1 + rng.int(3);
  for (let r = 0; r < rounds; r++) {
    const at = rng.int(Math.max(1, b.length));
    switch (rng.int(6)) {
      case 0:
        b.length = at;
        break; // truncate
      case 1:
        b[at] = rng.int(256);
        break; // flip a byte
      case 2:
        b.splice(at, 1 + rng.int(16));
        break; // delete a run
      case 3:
        b.splice(at, 0, ...b.slice(rng.int(b.length), rng.int(b.length) + 1 + rng.int(32)));
        break; // splice in a copy
      case 4:
        b.splice(at, 0, ...Array.from({ length: 1 + rng.int(8) }, () => rng.int(256)));
        break; // random bytes
      default: {
        // replace the next number-like run with a lying value
        let s = at;
        while (s < b.length && !(b[s] >= 48 && b[s] <= 57)) s++;
        let e = s;
        while (e < b.length && ((b[e] >= 48 && b[e] <= 57) || b[e] === 46 || b[e] === 45)) e++;
        b.splice(s, e - s, ...new TextEncoder().encode(NUMBERS[rng.int(NUMBERS.length)]));
      }
    }
  }
  return Uint8Array.from(b);
}

let printed: string[] = [];
beforeAll(async () => {
  await loadCadReader();
  const keep = (...a: unknown[]) => {
    printed.push(a.map(String).join(' ').slice(0, 200));
    return true;
  };
  for (const m of ['log', 'warn', 'error', 'info', 'debug'] as const) vi.spyOn(console, m).mockImplementation(keep);
  vi.spyOn(process.stdout, 'write').mockImplementation(keep);
  vi.spyOn(process.stderr, 'write').mockImplementation(keep);
});
afterAll(() => vi.restoreAllMocks());

describe(`mutation fuzzing: up to ${MUTATIONS_PER_FILE} seeded mutations of each of ${SEEDS.length} valid files`, () => {
  it.each(SEEDS)('%s', async (name, make) => {
    printed = [];
    const src = new Uint8Array(make());
    // The unmutated file imports.
    expect(loadPart(src.slice().buffer, name, { points: 64, seed: 0 }).points.length).toBe(64 * 3);
    const rng = createRng(hashSeed(name));
    const outcomes = { imported: 0, refused: 0 };
    const count = MUTATIONS_FOR(name);
    for (let i = 0; i < count; i++) {
      const input = mutate(src, rng);
      const t0 = performance.now();
      if (name.endsWith('.step')) await loadCadReader(); // as every caller does before a CAD file
      try {
        const part = loadPart(input.slice().buffer, name, { points: 64, seed: i });
        for (const v of part.meshPositions) expect(Number.isFinite(v)).toBe(true);
        for (const k of part.meshIndices) expect(k).toBeLessThan(part.meshPositions.length / 3);
        for (const v of part.points) expect(Number.isFinite(v)).toBe(true);
        outcomes.imported++;
      } catch (err) {
        if (!(err instanceof MeshImportError))
          throw new Error(
            `mutation ${i} of ${name} threw ${String(err)} (bytes: ${Buffer.from(input).toString('base64')})`,
            { cause: err },
          );
        expect(err.file).toBe(name);
        expect(err.reason, `mutation ${i}: ${err.reason}`).not.toMatch(RAW_JS);
        outcomes.refused++;
      }
      expect(performance.now() - t0, `mutation ${i} of ${name}`).toBeLessThan(HANG_GUARD_MS);
    }
    expect(printed, `${name}: a reader printed`).toEqual([]);
    // Both outcomes happen: the mutations reach the parsers' checks and also leave readable files.
    expect(outcomes.refused).toBeGreaterThan(0);
    expect(outcomes.imported + outcomes.refused).toBe(count);
  });
});

function hashSeed(name: string): number {
  let h = 0;
  for (const c of name) h = (h * 31 + c.charCodeAt(0)) >>> 0;
  return h;
}
