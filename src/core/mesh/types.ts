// The one structure every importer produces, and the typed error every importer throws.

export type Vec3 = readonly [number, number, number];

export type MeshFormat =
  'stl-binary' | 'stl-ascii' | 'obj' | 'ply' | 'off' | 'xyz' | 'step' | 'iges' | 'vrml' | 'gltf' | '3mf';

/** Welded geometry in file units. `indices === null` means a point set (a scan with no faces). */
export interface Mesh {
  readonly positions: Float32Array; // (V*3) x, y, z per vertex
  readonly indices: Uint32Array | null; // (T*3) vertex indices per triangle
}

/** What an importer measured, in the file's own units (mesh files carry no units). */
export interface MeshInfo {
  readonly format: MeshFormat;
  readonly vertexCount: number;
  readonly triangleCount: number;
  /** Zero-area or repeated-vertex triangles dropped on import. */
  readonly degenerateSkipped: number;
  readonly bboxMin: Vec3;
  readonly bboxMax: Vec3;
  readonly extents: Vec3;
  /** Sum of triangle areas (0 for a point set). */
  readonly area: number;
  /** Every edge shared by exactly two triangles. */
  readonly closed: boolean;
  /** Enclosed volume (divergence theorem) when closed, else null. */
  readonly volume: number | null;
  readonly fileBytes: number;
  /** Separate bodies the file declares (STEP/IGES solids, VRML shapes); null where a format does not say. */
  readonly bodies: number | null;
  /** What the coordinates measure: millimetres where the format says so (STEP, IGES), else the file's own units. */
  readonly units: 'mm' | 'file';
}

export interface ImportedMesh {
  readonly name: string;
  readonly mesh: Mesh;
  readonly info: MeshInfo;
}

export type ImportErrorCode =
  | 'empty'
  | 'too-large'
  | 'unsupported-type'
  | 'truncated'
  | 'unrecognised'
  | 'non-finite'
  | 'index-out-of-range'
  | 'zero-area'
  | 'no-geometry'
  | 'parse-failed'
  /** Reading did not finish within its time limit and was stopped (the workbench's import worker). */
  | 'timed-out';

/** A file that could not be imported: names the file and the reason; a batch carries on without it. */
export class MeshImportError extends Error {
  readonly file: string;
  readonly code: ImportErrorCode;
  readonly reason: string;
  constructor(file: string, code: ImportErrorCode, reason: string) {
    super(`${file}: ${reason}`);
    this.name = 'MeshImportError';
    this.file = file;
    this.code = code;
    this.reason = reason;
  }
}
