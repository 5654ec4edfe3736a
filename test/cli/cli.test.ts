// The command line end to end on the demo library: a tiny training run, then every command on its output.

import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { zlibSync } from './zlib-crc';
import { CylinderGeometry, PlaneGeometry } from 'three';
import { diffusionCeiling } from '../../src/core/retrieval/index';
import { SURFACE_GRID_SHARE } from '../../src/core/model/encoder-config';
import { writeObj } from '../../src/core/mesh/write';
import { join } from 'node:path';
import { afterAll, afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import { main } from '../../src/cli/main';
import { captureOutput } from './capture';
import { crc32 } from '../../src/core/checksum';
import { cpSync } from 'node:fs';
import { guardTensorLeaks } from '../tf-helpers';
import { removeScratch, scratchDir } from '../scratch';

guardTensorLeaks();

const firstFile = (family: string) => readdirSync(join(DEMO, family)).sort()[0];

const DEMO = 'demo-shapes';
let run = '';
let out: string[] = [];
let err: string[] = [];

function capture() {
  ({ out, err } = captureOutput());
}
afterEach(() => vi.restoreAllMocks());
afterAll(removeScratch);

beforeAll(async () => {
  run = scratchDir('shapekin-run-');
  capture();
  const code = await main(['train', DEMO, '--out', run, '--epochs', '2', '--points', '128', '--json']);
  vi.restoreAllMocks();
  if (code !== 0) throw new Error(`train failed: ${err.join('')}`);
}, 120_000);

describe('shapekin train', () => {
  it('picks the inputs from the library: normals for closed meshes, x y z only when most are open; --inputs overrides', async () => {
    // The demo run above: every demo mesh is closed.
    expect(
      JSON.parse(readFileSync(join(run, 'model.json'), 'utf8')).modelTopology.shapekin.config.encoder.inputFeatures,
    ).toBe('xyz+normal');
    const lib = scratchDir('shapekin-open-');
    const open = [
      new PlaneGeometry(2, 1, 4, 2),
      new CylinderGeometry(1, 1, 2, 16, 1, true),
      new CylinderGeometry(0.5, 1, 1, 12, 1, true),
    ];
    open.forEach((g, i) =>
      writeFileSync(
        join(lib, `open${i}.obj`),
        writeObj({ positions: g.getAttribute('position').array, indices: g.index!.array }, 'open surface'),
      ),
    );
    const openRun = join(lib, 'run');
    capture();
    expect(await main(['train', lib, '--out', openRun, '--epochs', '1', '--points', '64', '--batch', '3'])).toBe(0);
    expect(err.join('')).toMatch(/inputs: x y z only: 0 of 3 meshes are closed/);
    // A plane and two cylinders modelled square to their axes keep the files' axes; the demo, a third of it
    // exported turned, gets principal axes.
    expect(err.join('')).toMatch(
      /pose: the files' own axes and principal axes, one encoder each: 3 of 3 parts sit square in their files' axes/,
    );
    expect(err.join('')).toMatch(/training on 3 parts, 2 steps \(2 encoders × 1 epochs × 1\)/);
    const openConfig = JSON.parse(readFileSync(join(openRun, 'model.json'), 'utf8')).modelTopology.shapekin.config;
    expect(openConfig.encoder.inputFeatures).toBe('xyz');
    expect(openConfig.pose).toBe('file-and-principal');
    expect(JSON.parse(readFileSync(join(run, 'model.json'), 'utf8')).modelTopology.shapekin.config.pose).toBe(
      'principal-axes',
    );
    expect(
      await main([
        'train',
        lib,
        '--out',
        openRun,
        '--epochs',
        '1',
        '--points',
        '64',
        '--batch',
        '3',
        '--inputs',
        'xyz+unsigned-normal',
        '--json',
      ]),
    ).toBe(0);
    expect(
      JSON.parse(readFileSync(join(openRun, 'model.json'), 'utf8')).modelTopology.shapekin.config.encoder.inputFeatures,
    ).toBe('xyz+unsigned-normal');
    expect(await main(['train', lib, '--out', openRun, '--inputs', 'colour'])).toBe(2);
    expect(
      await main([
        'train',
        lib,
        '--out',
        openRun,
        '--epochs',
        '1',
        '--points',
        '64',
        '--batch',
        '3',
        '--pose',
        'as-is',
        '--json',
      ]),
    ).toBe(0);
    const kept = JSON.parse(readFileSync(join(openRun, 'model.json'), 'utf8')).modelTopology.shapekin.config;
    expect(kept.pose).toBe('as-is');
    expect(kept.pipeline.steps.map((s: { kind: string }) => s.kind)).toEqual(['scale', 'occlude', 'jitter']); // no turning
    expect(
      await main([
        'train',
        lib,
        '--out',
        openRun,
        '--epochs',
        '1',
        '--points',
        '64',
        '--batch',
        '3',
        '--neighbours',
        '8',
        '--json',
      ]),
    ).toBe(0);
    expect(
      JSON.parse(readFileSync(join(openRun, 'model.json'), 'utf8')).modelTopology.shapekin.config.encoder.edge,
    ).toEqual({ k: 8, width: 64 });
    expect(await main(['eval', lib, '--model', openRun, '--json'])).toBe(0); // the saved layer is rebuilt and used
    expect(await main(['train', lib, '--out', openRun, '--neighbours', '-1'])).toBe(2);
  });
  it('writes a model in tfjs format and reports the run as JSON', () => {
    expect(existsSync(join(run, 'model.json'))).toBe(true);
    expect(existsSync(join(run, 'weights.bin'))).toBe(true);
    const model = JSON.parse(readFileSync(join(run, 'model.json'), 'utf8'));
    expect(model.format).toBe('shapekin-encoder');
    expect(model.weightsManifest[0].paths).toEqual(['weights.bin']);
    expect(model.modelTopology.shapekin.step).toBe(6); // 112 parts, batch 32 → 3 steps an epoch, 2 epochs
  });
  it('--resume picks the saved run up where it stopped (here: already complete, so no new steps)', async () => {
    capture();
    expect(await main(['train', DEMO, '--out', run, '--resume', '--json'])).toBe(0);
    const r = JSON.parse(out.join('\n'));
    expect(r.status).toBe('done');
    expect(r.steps).toBe(6);
  }, 120_000);
});

describe('shapekin eval --json', () => {
  it('prints one object with parts, labels and every method in [0, 1]', async () => {
    capture();
    expect(await main(['eval', DEMO, '--model', run, '--json'])).toBe(0);
    const r = JSON.parse(out.join('\n'));
    expect(r.parts).toBe(112);
    expect(r.labels).toBe(14);
    expect(Object.keys(r.methods).sort()).toEqual([
      'd2',
      'd2+diffusion',
      'learned',
      'learned+diffusion',
      'untrained',
      'untrained+diffusion',
    ]);
    for (const m of Object.values(r.methods) as Record<string, number>[]) {
      expect(Object.keys(m).sort()).toEqual(['dcg', 'first_tier', 'map', 'nn', 'p_at_5', 'second_tier']);
      for (const v of Object.values(m)) {
        expect(v).toBeGreaterThanOrEqual(0);
        expect(v).toBeLessThanOrEqual(1);
      }
    }
    expect(err.join('')).toBe(''); // --json keeps stderr free of per-file lines
  }, 120_000);
  it('without --model leaves learned out', async () => {
    capture();
    expect(await main(['eval', DEMO, '--json'])).toBe(0);
    expect(Object.keys(JSON.parse(out.join('\n')).methods).sort()).toEqual([
      'd2',
      'd2+diffusion',
      'untrained',
      'untrained+diffusion',
    ]);
  }, 120_000);
});

describe('shapekin embed, query, duplicates, study', () => {
  it('embed writes .npy (NumPy v1.0), .csv and .json', async () => {
    capture();
    const npy = join(run, 'e.npy'),
      csv = join(run, 'e.csv'),
      json = join(run, 'e.json');
    for (const f of [npy, csv, json]) expect(await main(['embed', DEMO, '--model', run, '--out', f])).toBe(0);
    const b = readFileSync(npy);
    expect(b.subarray(1, 6).toString()).toBe('NUMPY');
    expect(b.subarray(10, 10 + b.readUInt16LE(8)).toString()).toContain("'shape': (112, 512)"); // the head's 128 values, then the surface grid's 384 (8³ cells × 3 facings, folded by the 4 sign choices)
    const rows = readFileSync(csv, 'utf8').trim().split('\n');
    expect(rows[0].split(',').slice(0, 7)).toEqual([
      'file',
      'label',
      'extent_x',
      'extent_y',
      'extent_z',
      'units',
      'e0',
    ]);
    expect(rows.length).toBe(113);
    expect(JSON.parse(readFileSync(json, 'utf8')).parts[0].embedding.length).toBe(512);
  }, 120_000);
  it('query ranks library parts for a mesh file, best first, with the caution', async () => {
    capture();
    const file = join(DEMO, 'washer', 'BC01-100A.stl');
    expect(await main(['query', file, '--model', run, '--library', DEMO, '-k', '5', '--json'])).toBe(0);
    const r = JSON.parse(out.join('\n'));
    expect(r.results.length).toBe(5);
    // Sampled afresh under another name, the file need not be its own first match, but its family leads.
    expect(r.results[0].label).toBe('washer');
    expect(r.results.map((x: { file: string }) => x.file)).toContain('washer/BC01-100A.stl');
    // Ordered through the library unless the model's embedding is too concentrated (this short run's may be).
    expect(r.order).toBe(r.mean_pair_cosine < diffusionCeiling(SURFACE_GRID_SHARE) ? 'diffusion' : 'cosine');
    expect(r.caution).toMatch(/qualified person/);
    // By similarity alone the cosine scores fall rank by rank.
    capture();
    expect(
      await main(['query', file, '--model', run, '--library', DEMO, '-k', '5', '--order', 'cosine', '--json']),
    ).toBe(0);
    const c = JSON.parse(out.join('\n'));
    expect(c.order).toBe('cosine');
    for (let i = 1; i < 5; i++) expect(c.results[i].score).toBeLessThanOrEqual(c.results[i - 1].score);
    expect(c.results[0].label).toBe('washer');
  }, 120_000);
  it('duplicates puts a re-saved copy of a part in a group with its original', async () => {
    capture();
    // A small library: one washer saved twice under two part numbers, and parts of three other families.
    const lib = scratchDir('shapekin-dup-');
    for (const f of [
      'washer/BC01-100A.stl',
      'hex-nut/' + firstFile('hex-nut'),
      'angle/' + firstFile('angle'),
      'i-beam/' + firstFile('i-beam'),
    ]) {
      cpSync(join(DEMO, f), join(lib, f.replace('/', '-')));
    }
    cpSync(join(DEMO, 'washer/BC01-100A.stl'), join(lib, 'washer-copy-BC99-100A.stl'));
    expect(await main(['duplicates', lib, '--model', run, '--threshold', '0.99', '--json'])).toBe(0);
    const r = JSON.parse(out.join('\n'));
    expect(r.threshold).toBe(0.99);
    const files = (g: { parts: { file: string }[] }) => g.parts.map((p) => p.file);
    const twin = r.groups.find((g: { parts: { file: string }[] }) => files(g).includes('washer-copy-BC99-100A.stl'));
    expect(twin, 'the copy is in no group').toBeDefined();
    expect(files(twin)).toContain('washer-BC01-100A.stl');
    for (const g of r.groups) expect(g.parts.length).toBeGreaterThanOrEqual(2);
  }, 120_000);
  it('study reports rows per augmentation, strength and method', async () => {
    capture();
    expect(
      await main(['study', DEMO, '--model', run, '--augmentations', 'jitter', '--strengths', '0,1', '--json']),
    ).toBe(0);
    const r = JSON.parse(out.join('\n'));
    expect(r.rows.length).toBe(2 * 3);
    const clean = r.rows.find((x: { strength: number; method: string }) => x.strength === 0 && x.method === 'learned');
    expect(clean.instance_top1).toBe(1); // an unchanged part finds itself
    expect(clean.mean_chamfer).toBe(0);
    expect(clean.queries).toBe(r.parts); // the demo is smaller than the default sample: every part
    // embedded on the threads (above, one per core) or here: the same figures
    const study = async (...extra: string[]) => {
      capture();
      const args = ['study', DEMO, '--model', run, '--augmentations', 'jitter', '--strengths', '0,1', '--json'];
      expect(await main([...args, ...extra])).toBe(0);
      return JSON.parse(out.join('\n'));
    };
    expect((await study('--threads', '1')).rows).toEqual(r.rows);
    const sample = await study('--queries', '40');
    expect(sample.rows.map((x: { queries: number }) => x.queries)).toEqual(new Array(6).fill(40));
    const same = sample.rows.find(
      (x: { strength: number; method: string }) => x.strength === 0 && x.method === 'learned',
    );
    expect(same.instance_top1).toBe(1);
    expect(same.instance_top1_ci95[0]).toBeGreaterThan(0.9); // Wilson, 40 of 40
  }, 180_000);
});

describe('bad arguments and unreadable files: one clear line and a non-zero exit', () => {
  it.each([
    [['frobnicate', DEMO], 2, /unknown command "frobnicate"/],
    [['train', DEMO], 2, /train needs --out/],
    [['eval', 'no/such/folder'], 1, /library folder not found: no\/such\/folder/],
    [['embed', DEMO, '--model', 'no/such/run', '--out', 'x.npy'], 1, /no model in no\/such\/run/],
    [['embed', DEMO, '--model', 'x', '--out', 'x.txt'], 2, /--out must end in .csv, .json or .npy/],
    [['train', DEMO, '--out', 'x', '--epochs', 'ten'], 2, /--epochs must be a whole number/],
    [
      ['train', DEMO, '--out', 'x', '--pose', 'upright'],
      2,
      /--pose must be one of principal-axes, file-axes, as-is, file-and-principal, got "upright"/,
    ],
    [['query', 'missing.stl', '--model', 'x', '--library', DEMO], 2, /query file not found/],
    [
      ['query', join(DEMO, 'washer', 'BC01-100A.stl'), '--model', 'x', '--library', DEMO, '--order', 'best'],
      2,
      /--order must be diffusion or cosine, got "best"/,
    ],
    [['eval', DEMO, '--bogus'], 2, /Unknown option '--bogus'/],
  ] as const)('%j', async (args, code, message) => {
    capture();
    expect(await main([...args])).toBe(code);
    expect(err.join('')).toMatch(message);
  });
  it('a bad file inside a library is reported and skipped', async () => {
    capture();
    expect(await main(['eval', DEMO])).toBe(0);
    expect(err.join('')).toMatch(/skipped broken\/empty-export\.stl: the file is empty/);
  }, 120_000);
});

describe('the --json contract: exactly one JSON document on stdout, bad files listed under "failures"', () => {
  it("eval lists the demo's broken files with their reasons, and stdout is one document", async () => {
    capture();
    expect(await main(['eval', DEMO, '--json'])).toBe(0);
    expect(out.length).toBe(1);
    const r = JSON.parse(out[0]);
    expect(r.failures.map((f: { file: string }) => f.file).sort()).toEqual([
      'broken/bad-coordinates.obj',
      'broken/empty-export.stl',
      'broken/missing-vertices.off',
      'broken/quote-saved-as-stl.stl',
      'broken/upload-cut-short.stl',
    ]);
    for (const f of r.failures) expect(f.reason.length).toBeGreaterThan(10);
  }, 120_000);
  it('embed --json reports what it wrote; a failing command prints {"error"} and exits non-zero', async () => {
    capture();
    expect(await main(['embed', DEMO, '--model', run, '--out', join(run, 'x.npy'), '--json'])).toBe(0);
    expect(JSON.parse(out.join('\n'))).toMatchObject({ parts: 112, dim: 512, failures: expect.any(Array) });
    capture();
    expect(await main(['embed', DEMO, '--model', 'no/such/run', '--out', 'x.npy', '--json'])).toBe(1);
    expect(out.length).toBe(1);
    expect(JSON.parse(out[0])).toEqual({ error: expect.stringMatching(/no model in no\/such\/run/), exit_code: 1 });
  }, 120_000);
  it('--progress json writes progress as JSON lines on stderr and leaves stdout alone', async () => {
    capture();
    expect(await main(['eval', DEMO, '--json', '--progress', 'json'])).toBe(0);
    const lines = err
      .join('')
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l));
    expect(lines.some((l) => l.event === 'progress' && l.stage === 'reading' && l.done === l.total)).toBe(true);
    expect(out.length).toBe(1);
  }, 120_000);
  it('--max-file-mb refuses larger files before reading them and says how to raise the cap', async () => {
    capture();
    expect(await main(['eval', DEMO, '--json', '--max-file-mb', '0.02'])).toBe(0);
    const big = JSON.parse(out[0]).failures.filter((f: { reason: string }) =>
      /over the 20971-byte limit \(raise it with --max-file-mb\)/.test(f.reason),
    );
    expect(big.length).toBeGreaterThan(10);
  }, 120_000);
});

describe('numbers out of range, and models that cannot be trusted', () => {
  it.each([
    [
      ['query', join(DEMO, 'washer', 'BC01-100A.stl'), '--model', 'x', '--library', DEMO, '-k', '0'],
      /--k must be a whole number of at least 1, got "0"/,
    ],
    [
      ['query', join(DEMO, 'washer', 'BC01-100A.stl'), '--model', 'x', '--library', DEMO, '--k=-5'],
      /--k must be a whole number of at least 1, got "-5"/,
    ],
    [
      ['query', join(DEMO, 'washer', 'BC01-100A.stl'), '--model', 'x', '--library', DEMO, '--size-ratio', '0.5'],
      /--size-ratio must be a number of at least 1/,
    ],
    [['duplicates', DEMO, '--model', 'x', '--threshold', '2'], /--threshold must be a number from -1 to 1, got "2"/],
    [['train', DEMO, '--out', 'x', '--epochs', '0'], /--epochs must be a whole number of at least 1/],
    [['eval', DEMO, '--progress', 'loud'], /--progress must be bar, json or none/],
  ] as const)('%j', async (args, message) => {
    capture();
    expect(await main([...args])).toBe(2);
    expect(err.join('')).toMatch(message);
    expect(err.join('').trim().split('\n').length).toBe(1); // one line, no stack trace
  });
  it('weights from another save, or NaN weights of the right size, are refused on load', async () => {
    const copy = scratchDir('shapekin-torn-');
    cpSync(run, copy, { recursive: true });
    const weights = readFileSync(join(copy, 'weights.bin'));
    const other = new Float32Array(weights.buffer.slice(weights.byteOffset, weights.byteOffset + weights.byteLength));
    other[0] += 0.25; // a later save of the same run: same size, other values
    writeFileSync(join(copy, 'weights.bin'), new Uint8Array(other.buffer));
    capture();
    expect(
      await main(['query', join(DEMO, 'washer', 'BC01-100A.stl'), '--model', copy, '--library', DEMO, '--json']),
    ).toBe(1);
    expect(JSON.parse(out[0]).error).toMatch(/weights file does not belong to this model\.json/);
    // NaN values with a manifest that matches them: refused for what they are.
    other.fill(NaN, 0, 10);
    writeFileSync(join(copy, 'weights.bin'), new Uint8Array(other.buffer));
    const model = JSON.parse(readFileSync(join(copy, 'model.json'), 'utf8'));
    model.userDefinedMetadata.weightsCrc32 = crc32(new Uint8Array(other.buffer));
    writeFileSync(join(copy, 'model.json'), JSON.stringify(model));
    capture();
    expect(
      await main(['query', join(DEMO, 'washer', 'BC01-100A.stl'), '--model', copy, '--library', DEMO, '--json']),
    ).toBe(1);
    expect(JSON.parse(out[0]).error).toMatch(/NaN or infinite/);
  }, 120_000);
  it("the saved checksum is the standard CRC-32 of weights.bin (zlib's crc32 as the reference)", () => {
    const model = JSON.parse(readFileSync(join(run, 'model.json'), 'utf8'));
    expect(model.userDefinedMetadata.weightsCrc32).toBe(zlibSync(readFileSync(join(run, 'weights.bin'))));
  });
});

describe('training saves early and says what --resume found', () => {
  it('--resume with nothing saved says so and starts from step 0', async () => {
    const fresh = join(scratchDir('shapekin-fresh-'), 'run');
    capture();
    expect(await main(['train', DEMO, '--out', fresh, '--epochs', '1', '--points', '64', '--resume'])).toBe(0);
    expect(err.join('')).toMatch(/--resume: nothing has been saved in .* yet, so training starts from step 0/);
  }, 120_000);
  it('the first checkpoint is written right after the first step, while training goes on', async () => {
    const fresh = join(scratchDir('shapekin-early-'), 'run');
    capture();
    const seen: { step: number; status: string }[] = [];
    const poll = setInterval(() => {
      if (!existsSync(join(fresh, 'model.json'))) return;
      const m = JSON.parse(readFileSync(join(fresh, 'model.json'), 'utf8')).modelTopology.shapekin;
      if (!seen.some((x) => x.step === m.step)) seen.push({ step: m.step, status: m.status });
    }, 5);
    try {
      expect(await main(['train', DEMO, '--out', fresh, '--epochs', '3', '--points', '64', '--json'])).toBe(0);
    } finally {
      clearInterval(poll);
    }
    expect(seen[0]).toEqual({ step: 1, status: 'running' });
    const last = JSON.parse(readFileSync(join(fresh, 'model.json'), 'utf8')).modelTopology.shapekin;
    expect([last.step, last.status]).toEqual([9, 'done']);
  }, 120_000);
});

describe('a CAD file as the query', () => {
  // First in this file to read a CAD file, so it also checks that query loads OpenCascade itself.
  it('a STEP file can be the query (OpenCascade is loaded for it), its size shown in mm', async () => {
    capture();
    expect(
      await main([
        'query',
        'test/fixtures/kicad/Battery_CR1225.step',
        '--model',
        run,
        '--library',
        DEMO,
        '-k',
        '3',
        '--json',
      ]),
    ).toBe(0);
    const r = JSON.parse(out[0]);
    expect(r.query_units).toBe('mm');
    expect(r.results.length).toBe(3);
  }, 120_000);
});

describe('shapekin inspect', () => {
  it('lists format, bodies, triangles, closedness and size with units, or the reason, as one JSON array', async () => {
    const dir = scratchDir('shapekin-inspect-');
    cpSync('test/fixtures/kicad/Battery_CR1225.step', join(dir, 'cell.step'));
    cpSync('test/fixtures/kicad/Battery_CR1225.wrl', join(dir, 'cell.wrl'));
    writeFileSync(join(dir, 'empty.stl'), '');
    capture();
    expect(await main(['inspect', dir, '--json'])).toBe(0);
    expect(out.length).toBe(1);
    const rows = JSON.parse(out[0]);
    expect(rows.map((r: { file: string }) => r.file)).toEqual(['cell.step', 'cell.wrl', 'empty.stl']);
    expect(rows[0]).toMatchObject({ format: 'step', bodies: 1, closed: true, units: 'mm' });
    // A CR1225 lithium coin cell is 12.5 mm across and 2.5 mm thick (IEC 60086 designation; value from memory).
    expect(rows[0].size[0]).toBeCloseTo(12.5, 1);
    expect(rows[0].size[2]).toBeCloseTo(2.5, 1);
    expect(rows[1]).toMatchObject({ format: 'vrml', units: 'file units' });
    expect(rows[2]).toEqual({ file: 'empty.stl', error: 'the file is empty (0 bytes)' });
    // KiCad's VRML unit is 0.1 inch: with --units 2.54 both files measure the same.
    capture();
    expect(await main(['inspect', dir, '--json', '--units', '2.54'])).toBe(0);
    const scaled = JSON.parse(out[0]);
    expect(scaled[1].units).toBe('mm');
    scaled[1].size.forEach((v: number, k: number) => expect(Math.abs(v / scaled[0].size[k] - 1)).toBeLessThan(0.01));
    expect(await main(['inspect', dir, '--units', 'furlong'])).toBe(2);
  }, 60_000);
});

describe('import threads', () => {
  it('a library read on two threads embeds to the same bytes as on one', async () => {
    const one = join(run, 'threads-1.npy'),
      two = join(run, 'threads-2.npy');
    capture();
    expect(await main(['embed', DEMO, '--model', run, '--out', one, '--threads', '1'])).toBe(0);
    expect(await main(['embed', DEMO, '--model', run, '--out', two, '--threads', '2'])).toBe(0);
    expect(Buffer.compare(readFileSync(one), readFileSync(two))).toBe(0);
    expect(await main(['embed', DEMO, '--model', run, '--out', two, '--threads', '0'])).toBe(2);
  }, 120_000);
});
