// The one list of file formats Shapekin reads: every picker, drop zone, folder walk, message and the
// command line's help read it from here.

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
  /** What the file's numbers measure: millimetres when the format says so (3MF and glTF are converted from
   * their stated unit and metres), else the file's own units. */
  readonly units: 'mm' | 'file';
}

export const FORMATS: readonly FileFormat[] = [
  { id: 'step', label: 'STEP', extensions: ['step', 'stp'], text: false, cad: true, units: 'mm' },
  { id: 'iges', label: 'IGES', extensions: ['iges', 'igs'], text: false, cad: true, units: 'mm' },
  { id: '3mf', label: '3MF', extensions: ['3mf'], text: false, cad: false, units: 'mm' },
  { id: 'gltf', label: 'glTF', extensions: ['gltf', 'glb'], text: false, cad: false, units: 'mm' },
  { id: 'stl', label: 'STL', extensions: ['stl'], text: false, cad: false, units: 'file' },
  { id: 'obj', label: 'OBJ', extensions: ['obj'], text: true, cad: false, units: 'file' },
  { id: 'ply', label: 'PLY', extensions: ['ply'], text: false, cad: false, units: 'file' },
  { id: 'off', label: 'OFF', extensions: ['off'], text: true, cad: false, units: 'file' },
  { id: 'vrml', label: 'VRML', extensions: ['wrl', 'vrml'], text: true, cad: false, units: 'file' },
  { id: 'points', label: 'XYZ/CSV point lists', extensions: ['xyz', 'csv', 'pts', 'txt'], text: true, cad: false, units: 'file' },
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
