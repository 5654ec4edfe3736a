// STEP (ISO 10303-21) and IGES files through OpenCascade compiled to WebAssembly (occt-import-js): the B-rep
// is tessellated into triangles in millimetres, and every body in the file becomes part of one part. The
// tessellation follows the part's size (a deflection of 0.1 % of the bounding box, 0.5 rad angular), so a
// pin or a hole on a large housing keeps a few triangles across it.

import { finishMesh } from './geometry';
import { MeshImportError, type ImportedMesh } from './types';

/** The subset of occt-import-js's module Shapekin uses. */
export interface OcctModule {
  ReadStepFile(bytes: Uint8Array, params: OcctParams | null): OcctResult;
  ReadIgesFile(bytes: Uint8Array, params: OcctParams | null): OcctResult;
}

export interface OcctParams {
  readonly linearUnit: 'millimeter' | 'centimeter' | 'meter' | 'inch' | 'foot';
  readonly linearDeflectionType: 'bounding_box_ratio' | 'absolute_value';
  readonly linearDeflection: number;
  readonly angularDeflection: number;
}

interface OcctResult {
  readonly success: boolean;
  readonly meshes?: readonly {
    readonly attributes: { readonly position: { readonly array: ArrayLike<number> } };
    readonly index?: { readonly array: ArrayLike<number> };
  }[];
}

/** Tessellation settings: millimetres; chord error 0.1 % of the part's bounding box; 0.5 rad between facets. */
export const TESSELLATION: OcctParams = {
  linearUnit: 'millimeter',
  linearDeflectionType: 'bounding_box_ratio',
  linearDeflection: 0.001,
  angularDeflection: 0.5,
};

/** The loader's side: what OpenCascade printed while reading (for the failure reason), and a way to say
 * that it trapped, after which its memory cannot be trusted and it must be loaded afresh. */
export interface OcctHost {
  take(): string[];
  trapped(): void;
}

export function parseCad(
  buffer: ArrayBuffer,
  file: string,
  kind: 'step' | 'iges',
  occt: OcctModule,
  host?: OcctHost,
): ImportedMesh {
  const bytes = new Uint8Array(buffer);
  const signature = kind === 'step' ? 'ISO-10303-21' : null;
  if (signature && !new TextDecoder().decode(bytes.subarray(0, 256)).includes(signature)) {
    throw new MeshImportError(file, 'unrecognised', `not a STEP file: it does not begin with "${signature};"`);
  }
  host?.take();
  let result: OcctResult;
  try {
    result = kind === 'step' ? occt.ReadStepFile(bytes, TESSELLATION) : occt.ReadIgesFile(bytes, TESSELLATION);
  } catch {
    // A WebAssembly trap inside OpenCascade (seen on damaged files): the module is reloaded for the next file.
    host?.trapped();
    throw new MeshImportError(
      file,
      'parse-failed',
      `${kind.toUpperCase()} stopped OpenCascade with an internal error: the file is damaged or uses something it cannot read`,
    );
  }
  const said = (host?.take() ?? []).map((l) => l.replace(/\*+/g, '').trim()).filter(Boolean);
  if (!result.success) {
    throw new MeshImportError(
      file,
      'parse-failed',
      `${kind.toUpperCase()} could not be read by OpenCascade${said.length ? ` (${said[0].slice(0, 160)})` : ''}`,
    );
  }
  const meshes = result.meshes ?? [];
  let vertices = 0,
    corners = 0;
  for (const m of meshes) {
    vertices += m.attributes.position.array.length;
    corners += m.index?.array.length ?? 0;
  }
  if (meshes.length === 0 || corners === 0)
    throw new MeshImportError(
      file,
      'no-geometry',
      `${kind.toUpperCase()} holds no solid or surface bodies to tessellate`,
    );
  const positions = new Float32Array(vertices);
  const indices = new Uint32Array(corners);
  let v = 0,
    c = 0;
  for (const m of meshes) {
    const base = v / 3;
    positions.set(m.attributes.position.array, v);
    const idx = m.index?.array ?? [];
    for (let i = 0; i < idx.length; i++) indices[c + i] = idx[i] + base;
    v += m.attributes.position.array.length;
    c += idx.length;
  }
  const part = finishMesh(file, kind, { positions, indices }, buffer.byteLength);
  return { ...part, info: { ...part.info, bodies: meshes.length } };
}
