// The one list of file formats Shapekin reads: every picker, drop zone, folder walk, message and the
// command line's help read it from here. (Each reader sets the units it reports: see `MeshInfo.units`.)

export type FormatId = 'stl' | 'obj' | 'ply' | 'off' | 'points' | 'step' | 'iges' | 'vrml' | 'gltf' | '3mf';

export interface FileFormat {
  readonly id: FormatId;
  /** What people call it, for lists on screen. */
  readonly label: string;
  readonly extensions: readonly string[];
  /** Text formats are decoded as UTF-8 before parsing, and a file of binary bytes is refused. */
  readonly text: boolean;
  /** CAD formats (B-rep) are tessellated by OpenCascade, loaded on first use. */
  readonly cad: boolean;
}

export const FORMATS: readonly FileFormat[] = [
  { id: 'step', label: 'STEP', extensions: ['step', 'stp'], text: false, cad: true },
  { id: 'iges', label: 'IGES', extensions: ['iges', 'igs'], text: false, cad: true },
  { id: '3mf', label: '3MF', extensions: ['3mf'], text: false, cad: false },
  { id: 'gltf', label: 'glTF', extensions: ['gltf', 'glb'], text: false, cad: false },
  { id: 'stl', label: 'STL', extensions: ['stl'], text: false, cad: false },
  { id: 'obj', label: 'OBJ', extensions: ['obj'], text: true, cad: false },
  { id: 'ply', label: 'PLY', extensions: ['ply'], text: false, cad: false },
  { id: 'off', label: 'OFF', extensions: ['off'], text: true, cad: false },
  { id: 'vrml', label: 'VRML', extensions: ['wrl', 'vrml'], text: true, cad: false },
  { id: 'points', label: 'XYZ/CSV point lists', extensions: ['xyz', 'csv', 'pts', 'txt'], text: true, cad: false },
];

const BY_EXTENSION = new Map(FORMATS.flatMap((f) => f.extensions.map((e) => [e, f] as const)));

export function extensionOf(file: string): string {
  const base = file.slice(Math.max(file.lastIndexOf('/'), file.lastIndexOf('\\')) + 1);
  const dot = base.lastIndexOf('.');
  return dot < 0 ? '' : base.slice(dot + 1).toLowerCase();
}

export function formatOf(file: string): FileFormat | null {
  return BY_EXTENSION.get(extensionOf(file)) ?? null;
}

export const SUPPORTED_EXTENSIONS: readonly string[] = FORMATS.flatMap((f) => f.extensions);

/** For a file input's `accept` attribute: ".step,.stp,…". */
export const ACCEPT = SUPPORTED_EXTENSIONS.map((e) => `.${e}`).join(',');

/** For messages: "STEP, IGES, STL, OBJ, PLY, OFF, VRML, XYZ/CSV point lists". */
export const FORMAT_NAMES = FORMATS.map((f) => f.label).join(', ');
