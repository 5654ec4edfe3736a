// STEP through OpenCascade (occt-import-js) and VRML through three's VRMLLoader, checked against the world:
// KiCad ships each component model twice, as STEP in millimetres and as VRML in its own unit of 0.1 inch
// (2.54 mm; KiCad's convention, common practice, no published source). 22 pairs from Debian's
// kicad-packages3d (CC-BY-SA 4.0 with the KiCad library exception; test/fixtures/kicad/SOURCES.md).

import { readdirSync, readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { initBackend } from '../../../src/core/model/backend';
import { defaultTrainFor, libraryTraits, POOL_POINTS } from '../../../src/core/model/defaults';
import { disposeEncoders, embedForRetrieval, type Encoders } from '../../../src/core/model/embed';
import { Trainer } from '../../../src/core/model/trainer';
import type { TrainConfig } from '../../../src/core/model/train-config';
import { loadPart, type LibraryPart } from '../../../src/core/library';
import { importMesh } from '../../../src/core/mesh/import';
import { loadCadReader } from '../../../src/core/mesh/occt';
import { MeshImportError } from '../../../src/core/mesh/types';
import { untrainedEncoders } from '../../../src/core/quality/evaluate';
import { cosineSimilarity } from '../../../src/core/retrieval/metrics';
import { fixture, textBuffer } from '../../meshes';
import { RAW_JS } from './reasons';
import { expectClose } from '../../helpers';
import { guardTensorLeaks } from '../../tf-helpers';

guardTensorLeaks();

const DIR = fileURLToPath(new URL('../../fixtures/kicad/', import.meta.url));
const NAMES = readdirSync(DIR)
  .filter((f) => f.endsWith('.step'))
  .map((f) => f.slice(0, -5))
  .sort();
const KICAD_VRML_UNIT_MM = 2.54;
/** Epochs of the short training run (enough steps for the loss to fall; the full default is far longer). */
const TWIN_EPOCHS = 10;

const printed: string[] = [];
beforeAll(async () => {
  await loadCadReader();
  const keep = (...a: unknown[]) => {
    printed.push(a.map(String).join(' ').slice(0, 200));
    return true;
  };
  for (const m of ['log', 'warn', 'error', 'info'] as const) vi.spyOn(console, m).mockImplementation(keep);
  vi.spyOn(process.stdout, 'write').mockImplementation(keep);
}, 60_000);
afterAll(() => vi.restoreAllMocks());

describe(`the same ${NAMES.length} KiCad components as STEP and as VRML`, () => {
  it('has at least 20 pairs', () => expect(NAMES.length).toBeGreaterThanOrEqual(20));
  it('STEP sizes are in millimetres and equal 2.54 × the VRML sizes within 1 %', () => {
    for (const name of NAMES) {
      const step = importMesh(fixture(`kicad/${name}.step`), `${name}.step`);
      const vrml = importMesh(fixture(`kicad/${name}.wrl`), `${name}.wrl`);
      expect([step.info.format, step.info.units, vrml.info.format, vrml.info.units]).toEqual([
        'step',
        'mm',
        'vrml',
        'file',
      ]);
      expect(step.info.bodies).toBeGreaterThanOrEqual(1);
      step.info.extents.forEach((e, k) => {
        const ratio = e / (vrml.info.extents[k] * KICAD_VRML_UNIT_MM);
        expect(Math.abs(ratio - 1), `${name} axis ${k}: ${e} mm vs ${vrml.info.extents[k]} × 2.54`).toBeLessThan(0.01);
      });
    }
    expect(printed).toEqual([]);
  }, 120_000);
  // Every STEP and its VRML as library parts, and the settings the library would get by default (its parts sit
  // square in their files' axes: two encoders).
  const twins = () => {
    const parts: LibraryPart[] = [];
    for (const name of NAMES)
      for (const ext of ['step', 'wrl'])
        parts.push(loadPart(fixture(`kicad/${name}.${ext}`), `${name}.${ext}`, { points: POOL_POINTS, seed: 0 }));
    const config = defaultTrainFor(libraryTraits(parts));
    expect(config.pose).toBe('file-and-principal');
    return { parts, config };
  };
  /** Parts whose nearest other part is not their twin (parts come in twin pairs: 2i, 2i + 1). */
  const missedTwins = (parts: readonly LibraryPart[], enc: Encoders, config: TrainConfig): string[] => {
    const vectors = embedForRetrieval(
      enc,
      parts.map((p) => ({ points: p.points, normals: p.normals })),
      config.points,
      config.pose,
    );
    const sim = cosineSimilarity(vectors, vectors.length / parts.length);
    const missed: string[] = [];
    parts.forEach((p, i) => {
      let best = -1,
        bestSim = -Infinity;
      parts.forEach((_, j) => {
        if (j !== i && sim(i, j) > bestSim) {
          bestSim = sim(i, j);
          best = j;
        }
      });
      if (Math.floor(best / 2) !== Math.floor(i / 2)) missed.push(`${p.name} → ${parts[best].name}`);
    });
    return missed;
  };

  it('each STEP and its VRML find each other as nearest other part, with the untrained encoder', async () => {
    await initBackend({ prefer: 'wasm' });
    const { parts, config } = twins();
    const enc = untrainedEncoders(config.encoder, config.pose, 0);
    expect(missedTwins(parts, enc, config)).toEqual([]);
    disposeEncoders(enc);
  }, 120_000);

  it('… and with an encoder trained on them (the default settings, a short run)', async () => {
    await initBackend({ prefer: 'wasm' });
    const { parts, config } = twins();
    const short = { ...config, epochs: TWIN_EPOCHS };
    const trainer = new Trainer(
      parts.map((p) => ({ points: p.points, normals: p.normals })),
      short,
    );
    const run = await trainer.run({ yieldEvery: 1_000 });
    expect(run.status).toBe('done');
    expect(trainer.step).toBeGreaterThanOrEqual(20);
    const first = run.history.slice(0, 5).reduce((s, h) => s + h.loss, 0);
    const last = run.history.slice(-5).reduce((s, h) => s + h.loss, 0);
    expect(last).toBeLessThan(first); // it learned something: the loss fell
    expect(missedTwins(parts, trainer.encoders, short)).toEqual([]);
    trainer.dispose();
  }, 300_000);
});

describe('files that ship with occt-import-js (its test folder, installed with the package)', () => {
  const dir = fileURLToPath(new URL('../../../node_modules/occt-import-js/test/testfiles/', import.meta.url));
  const read = (path: string) => {
    const b = readFileSync(dir + path);
    return importMesh(b.buffer.slice(b.byteOffset, b.byteOffset + b.length) as ArrayBuffer, path);
  };
  it('the same 10 mm cube as IGES, STEP and STL: 10 mm across, volume 1000 mm³, closed, in all three', () => {
    for (const f of ['cube-10x10mm/Cube 10x10.igs', 'cube-10x10mm/Cube 10x10.stp', 'cube-10x10mm/Cube 10x10.stl']) {
      const part = read(f);
      expect(part.info.closed, f).toBe(true);
      expectClose(part.info.extents, [10, 10, 10], { rtol: 1e-6 });
      expectClose(part.info.volume!, 1000, { rtol: 1e-6 });
    }
    expect(read('cube-10x10mm/Cube 10x10.igs').info.format).toBe('iges');
  });
  it("a 1 m cube saved with metre, millimetre and inch units reads 1000 mm across in every file (the package's own expectation)", () => {
    for (const f of ['cube-units/cube-m.step', 'cube-units/cube-mm.step', 'cube-units/cube-in.step']) {
      expectClose(read(f).info.extents, [1000, 1000, 1000], { rtol: 1e-6 });
    }
  });
});

describe('CAD files that cannot be read', () => {
  it('a file that is not STEP, a STEP that is cut short, and VRML 1.0 get reasons in our words; nothing is printed', () => {
    const step = new TextDecoder().decode(new Uint8Array(fixture(`kicad/${NAMES[0]}.step`)));
    const cases: [ArrayBuffer, string, RegExp][] = [
      [textBuffer('solid nothing\nendsolid\n'), 'drawing.step', /not a STEP file/],
      [
        textBuffer(step.slice(0, Math.floor(step.length / 3))),
        'cut.stp',
        /could not be read by OpenCascade|holds no solid/,
      ],
      [textBuffer('#VRML V1.0 ascii\nSeparator {}\n'), 'old.wrl', /VRML 1\.0 is not read/],
      [
        textBuffer(
          '#VRML V2.0 utf8\nShape { geometry IndexedFaceSet { coord Coordinate { point [ 0 0 0, 1 0 ] } coordIndex [ 0 1 2 -1 ] } }\n',
        ),
        'broken.wrl',
        /non-finite|VRML/,
      ],
    ];
    for (const [buffer, name, reason] of cases) {
      try {
        importMesh(buffer, name);
        throw new Error(`${name} imported`);
      } catch (err) {
        expect(err, name).toBeInstanceOf(MeshImportError);
        expect((err as MeshImportError).reason, name).toMatch(reason);
        expect((err as MeshImportError).reason, name).not.toMatch(RAW_JS);
      }
    }
    expect(printed).toEqual([]);
  }, 60_000);
});
