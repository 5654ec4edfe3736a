// The demo parts library of Brindle Cove Fabrication (a fictional job shop; see demo-shapes/README.md):
// every family's variants written as real exports would be (mixed formats, up axes, placements, units),
// plus a folder of deliberately broken files. Deterministic from the seed, byte for byte.

import { createRng, type Rng } from '../core/rng';
import { randomRotation, transformPoints, type Mat3 } from '../core/points/rotation';
import { writeObj, writeOff, writePly, writeStlAscii, writeStlBinary, type PlyEncoding } from '../core/mesh/write';
import { FAMILIES, type GeneratedPart } from './families';
import { signedVolumeOf } from './solids';

export const DEMO_SEED = 20261201;
export const VARIANTS_PER_FAMILY = 8;

export interface LibraryFile {
  readonly path: string; // relative to demo-shapes/
  readonly bytes: Uint8Array;
}

export interface LibraryEntry {
  readonly file: string;
  readonly family: string;
  readonly nominal: string;
  readonly units: 'mm' | 'in';
  readonly upAxis: 'z' | 'y' | 'any';
  readonly format: string;
  readonly triangles: number;
  readonly windingMixed: boolean;
  /** For the checks: expected volumes in file units³. */
  readonly volumeFaceted: number;
  readonly volumeSmooth: number;
  readonly tessellationGap: number;
}

export type Format = 'stl-binary' | 'stl-binary-solid-header' | 'stl-ascii' | 'obj' | 'obj-soup' | PlyEncoding | 'off';

// One slot per (family + variant) modulo the cycle: mostly binary STL, as most CAD libraries are.
const FORMAT_CYCLE: readonly Format[] = [
  'stl-binary',
  'stl-binary-solid-header',
  'stl-binary',
  'obj',
  'stl-binary',
  'ascii',
  'stl-binary',
  'stl-ascii',
  'stl-binary-solid-header',
  'obj-soup',
  'stl-binary',
  'binary_little_endian',
  'stl-binary',
  'off',
  'stl-binary',
  'obj',
  'stl-binary-solid-header',
  'binary_big_endian',
  'stl-binary',
  'stl-binary',
];

const EXT: Record<Format, string> = {
  'stl-binary': 'stl',
  'stl-binary-solid-header': 'stl',
  'stl-ascii': 'stl',
  obj: 'obj',
  'obj-soup': 'obj',
  ascii: 'ply',
  binary_little_endian: 'ply',
  binary_big_endian: 'ply',
  off: 'off',
};

/** Y-up exporters put the part's main axis on y: (x, y, z) → (x, z, −y). */
const Y_UP: Mat3 = Float64Array.from([1, 0, 0, 0, 0, 1, 0, -1, 0]);

function place(part: GeneratedPart, rng: Rng, scale: number, upAxis: LibraryEntry['upAxis']): Float32Array {
  const src = Float32Array.from(part.solid.positions);
  let p: Float32Array = src;
  if (upAxis === 'y') p = transformPoints(Y_UP, src);
  if (upAxis === 'any') p = transformPoints(randomRotation(rng), src);
  const offset = [rng.uniform(-400, 400), rng.uniform(-400, 400), rng.uniform(0, 300)];
  for (let i = 0; i < p.length; i++) p[i] = (p[i] + offset[i % 3]) * scale;
  return p;
}

/** Flip a random ~15% of the triangles, as a careless exporter might. */
function mixWinding(indices: number[], rng: Rng): number[] {
  const out = indices.slice();
  for (let t = 0; t < out.length / 3; t++) {
    if (rng.next() < 0.15) {
      const tmp = out[t * 3 + 1];
      out[t * 3 + 1] = out[t * 3 + 2];
      out[t * 3 + 2] = tmp;
    }
  }
  return out;
}

function encode(format: Format, positions: Float32Array, indices: number[], partNo: string, units: string): Uint8Array {
  const mesh = { positions, indices };
  const note = `${partNo} Brindle Cove Fabrication, units ${units}`;
  switch (format) {
    case 'stl-binary':
      return writeStlBinary(mesh, `BCF export ${partNo} units=${units}`);
    case 'stl-binary-solid-header':
      return writeStlBinary(mesh, `solid ${partNo} exported by the shop's CAM station`);
    case 'stl-ascii':
      return writeStlAscii(mesh, partNo);
    case 'obj':
      return writeObj(mesh, note);
    case 'obj-soup':
      return writeObj(mesh, note, { soup: true });
    case 'off':
      return writeOff(mesh, note);
    default:
      return writePly(mesh, note, format);
  }
}

export interface Library {
  readonly files: LibraryFile[];
  readonly entries: LibraryEntry[];
}

export interface GenerateOptions {
  /** Write every part in these formats, in turn (default: the demo's mix of exports). */
  readonly formats?: readonly Format[];
  /** Add the folder of broken files and labels.csv (default true). */
  readonly extras?: boolean;
}

export function generateLibrary(seed = DEMO_SEED, options: GenerateOptions = {}): Library {
  const cycle = options.formats ?? FORMAT_CYCLE;
  const master = createRng(seed);
  const files: LibraryFile[] = [];
  const entries: LibraryEntry[] = [];
  FAMILIES.forEach((family, f) => {
    const rng = master.fork();
    for (let v = 0; v < VARIANTS_PER_FAMILY; v++) {
      const part = family.make(rng, v);
      const format = cycle[(f * 3 + v * 7) % cycle.length];
      const units: 'mm' | 'in' = (f + v * 3) % 9 === 4 ? 'in' : 'mm';
      const upAxis: LibraryEntry['upAxis'] = (['z', 'y', 'any'] as const)[(f + v) % 3];
      const windingMixed = (f * 5 + v) % 11 === 3;
      const serial = String(100 + ((f * 37 + v * 13) % 900)).padStart(3, '0');
      const partNo = `BC${family.code}-${serial}${String.fromCharCode(65 + (v % 3))}`;
      const scale = units === 'in' ? 1 / 25.4 : 1;
      const positions = place(part, rng, scale, upAxis);
      // Volumes follow the solid as built (the checks also confirm it is outward before any flip).
      const outward = signedVolumeOf(part.solid) > 0;
      const indices = windingMixed ? mixWinding(part.solid.indices, rng) : part.solid.indices;
      const file = `${family.name}/${partNo}.${EXT[format]}`;
      files.push({ path: file, bytes: encode(format, positions, indices, partNo, units) });
      const s3 = scale ** 3;
      entries.push({
        file,
        family: family.name,
        nominal: part.nominal,
        units,
        upAxis,
        format,
        triangles: indices.length / 3,
        windingMixed,
        volumeFaceted: part.volumeFaceted * s3 * (outward ? 1 : -1),
        volumeSmooth: part.volumeSmooth * s3,
        tessellationGap: part.tessellationGap,
      });
    }
  });
  if (options.extras ?? true) {
    files.push(...brokenFiles(files));
    files.push({ path: 'labels.csv', bytes: new TextEncoder().encode(labelsCsv(entries)) });
  }
  return { files, entries };
}

function labelsCsv(entries: readonly LibraryEntry[]): string {
  const rows = ['file,family,nominal_size,units,up_axis,format,triangles'];
  for (const e of entries) rows.push([e.file, e.family, e.nominal, e.units, e.upAxis, e.format, e.triangles].join(','));
  return rows.join('\n') + '\n';
}

/** Files a real upload folder contains: each must be reported with its reason while the rest import. */
function brokenFiles(good: readonly LibraryFile[]): LibraryFile[] {
  const enc = new TextEncoder();
  const gearStl = good.find((g) => g.path.startsWith('spur-gear/') && g.path.endsWith('.stl') && g.bytes[0] !== 0x73)!;
  const half = gearStl.bytes.slice(0, 84 + 50 * Math.floor((gearStl.bytes.length - 84) / 100) + 17);
  return [
    { path: 'broken/upload-cut-short.stl', bytes: half },
    { path: 'broken/empty-export.stl', bytes: new Uint8Array(0) },
    {
      path: 'broken/bad-coordinates.obj',
      bytes: enc.encode(
        '# exported with a failed unit conversion\nv 0 0 0\nv 10 0 0\nv nan 10 0\nv 0 0 10\nf 1 2 3\nf 1 2 4\nf 1 3 4\nf 2 3 4\n',
      ),
    },
    {
      path: 'broken/quote-saved-as-stl.stl',
      bytes: enc.encode(
        'Brindle Cove Fabrication - quotation Q-4471\nQty 40 brackets, 3 mm mild steel, galvanised.\nDelivery: 2 weeks.\n',
      ),
    },
    {
      path: 'broken/missing-vertices.off',
      bytes: enc.encode('OFF\n4 2 0\n0 0 0\n1 0 0\n0 1 0\n0 0 1\n3 0 1 2\n3 0 2 9\n'),
    },
  ];
}
