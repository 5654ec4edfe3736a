// Entry point for every file: choose the parser by extension, enforce the size cap, and in a batch keep
// going past bad files, reporting each with its reason.

import { parseCad, type OcctModule } from './cad';
import { ACCEPT, FORMAT_NAMES, SUPPORTED_EXTENSIONS, extensionOf, formatOf } from './formats';
import { parseGltf } from './gltf';
import { parseObj } from './obj';
import { parse3mf } from './threemf';
import { cadReader, occtHost } from './occt';
import { parseOff } from './off';
import { parsePly } from './ply';
import { parseStl } from './stl';
import { decodeText, looksLikeText } from './text';
import { MeshImportError, type ImportedMesh } from './types';
import { parseVrml } from './vrml';
import { parseXyz } from './xyz';

export { ACCEPT, FORMAT_NAMES, SUPPORTED_EXTENSIONS, extensionOf };

export interface ImportOptions {
  /** Files larger than this are refused before parsing (default 256 MiB). */
  readonly maxBytes?: number;
  /** OpenCascade for STEP and IGES; by default the one `loadCadReader` loaded. */
  readonly occt?: OcctModule;
}

export const DEFAULT_MAX_BYTES = 256 * 1024 * 1024;

export function isSupportedFile(file: string): boolean {
  return formatOf(file) !== null;
}

/** Whether reading this file needs OpenCascade loaded first (`loadCadReader`). */
export function needsCadReader(file: string): boolean {
  return formatOf(file)?.cad ?? false;
}

/** Parse one file held in memory. Throws MeshImportError naming the file and the reason. */
export function importMesh(buffer: ArrayBuffer, file: string, options: ImportOptions = {}): ImportedMesh {
  const maxBytes = options.maxBytes ?? DEFAULT_MAX_BYTES;
  const format = formatOf(file);
  if (!format) {
    throw new MeshImportError(
      file,
      'unsupported-type',
      `unsupported file type ".${extensionOf(file)}" (Shapekin reads ${FORMAT_NAMES})`,
    );
  }
  if (buffer.byteLength === 0) throw new MeshImportError(file, 'empty', 'the file is empty (0 bytes)');
  if (buffer.byteLength > maxBytes) {
    throw new MeshImportError(
      file,
      'too-large',
      `the file is ${buffer.byteLength} bytes, over the ${maxBytes}-byte limit`,
    );
  }
  try {
    if (format.cad) {
      const occt = options.occt ?? cadReader();
      if (!occt)
        throw new MeshImportError(
          file,
          'parse-failed',
          'the STEP/IGES reader was not loaded before this file was read (loadCadReader)',
        );
      return parseCad(buffer, file, format.id as 'step' | 'iges', occt, occtHost);
    }
    if (format.id === 'stl') return parseStl(buffer, file);
    if (format.id === 'gltf') return parseGltf(buffer, file);
    if (format.id === '3mf') return parse3mf(buffer, file);
    if (format.id === 'ply') return parsePly(buffer, file);
    if (format.text && !looksLikeText(new Uint8Array(buffer))) {
      throw new MeshImportError(file, 'unrecognised', `${format.label} files are text, but this one holds binary data`);
    }
    const text = decodeText(buffer);
    if (format.id === 'obj') return parseObj(text, file, buffer.byteLength);
    if (format.id === 'off') return parseOff(text, file, buffer.byteLength);
    if (format.id === 'vrml') return parseVrml(text, file, buffer.byteLength);
    return parseXyz(text, file, buffer.byteLength);
  } catch (err) {
    if (err instanceof MeshImportError) throw err;
    throw new MeshImportError(file, 'parse-failed', `could not be read (${(err as Error).message ?? String(err)})`);
  }
}

export interface ImportFailure {
  readonly file: string;
  readonly code: MeshImportError['code'];
  readonly reason: string;
}

export interface BatchResult {
  readonly parts: ImportedMesh[];
  readonly failures: ImportFailure[];
}

/** Import many files; a bad one is listed in `failures` and the rest carry on. */
export function importBatch(
  files: Iterable<{ readonly name: string; readonly buffer: ArrayBuffer }>,
  options: ImportOptions = {},
  onProgress?: (done: number, file: string) => void,
): BatchResult {
  const parts: ImportedMesh[] = [];
  const failures: ImportFailure[] = [];
  let done = 0;
  for (const f of files) {
    try {
      parts.push(importMesh(f.buffer, f.name, options));
    } catch (err) {
      const e = err instanceof MeshImportError ? err : new MeshImportError(f.name, 'parse-failed', String(err));
      failures.push({ file: e.file, code: e.code, reason: e.reason });
    }
    onProgress?.(++done, f.name);
  }
  return { parts, failures };
}
