// Entry point for every file: choose the parser by extension, enforce the size cap, and in a batch keep
// going past bad files, reporting each with its reason.

import { parseObj } from './obj';
import { parseOff } from './off';
import { parsePly } from './ply';
import { parseStl } from './stl';
import { decodeText, looksLikeText } from './text';
import { MeshImportError, type ImportedMesh } from './types';
import { parseXyz } from './xyz';

export const SUPPORTED_EXTENSIONS = ['stl', 'obj', 'ply', 'off', 'xyz', 'csv', 'pts', 'txt'] as const;

export interface ImportOptions {
  /** Files larger than this are refused before parsing (default 256 MiB). */
  readonly maxBytes?: number;
}

export const DEFAULT_MAX_BYTES = 256 * 1024 * 1024;

export function extensionOf(file: string): string {
  const base = file.slice(file.lastIndexOf('/') + 1);
  const dot = base.lastIndexOf('.');
  return dot < 0 ? '' : base.slice(dot + 1).toLowerCase();
}

export function isSupportedFile(file: string): boolean {
  return (SUPPORTED_EXTENSIONS as readonly string[]).includes(extensionOf(file));
}

/** Parse one file held in memory. Throws MeshImportError naming the file and the reason. */
export function importMesh(buffer: ArrayBuffer, file: string, options: ImportOptions = {}): ImportedMesh {
  const maxBytes = options.maxBytes ?? DEFAULT_MAX_BYTES;
  const ext = extensionOf(file);
  if (!isSupportedFile(file)) {
    throw new MeshImportError(file, 'unsupported-type', `unsupported file type ".${ext}" (expected one of ${SUPPORTED_EXTENSIONS.join(', ')})`);
  }
  if (buffer.byteLength === 0) throw new MeshImportError(file, 'empty', 'the file is empty (0 bytes)');
  if (buffer.byteLength > maxBytes) {
    throw new MeshImportError(file, 'too-large', `the file is ${buffer.byteLength} bytes, over the ${maxBytes}-byte limit`);
  }
  try {
    switch (ext) {
      case 'stl':
        return parseStl(buffer, file);
      case 'ply':
        return parsePly(buffer, file);
      default: {
        if (!looksLikeText(new Uint8Array(buffer))) {
          throw new MeshImportError(file, 'unrecognised', `.${ext} files are text, but this one holds binary data`);
        }
        const text = decodeText(buffer);
        if (ext === 'obj') return parseObj(text, file, buffer.byteLength);
        if (ext === 'off') return parseOff(text, file, buffer.byteLength);
        return parseXyz(text, file, buffer.byteLength);
      }
    }
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
