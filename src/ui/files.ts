// Reading user files: picked files keep their folder path (webkitRelativePath), dropped folders are walked.

import { formatOf } from '../core/mesh/formats';
import type { FileInput } from '../worker/protocol';

export interface NamedFile {
  readonly name: string; // path relative to what the user chose
  readonly file: File;
}

export function namedFromInput(files: readonly File[]): NamedFile[] {
  return files.map((file) => ({ name: file.webkitRelativePath || file.name, file }));
}

async function walkEntry(entry: FileSystemEntry, prefix: string, out: NamedFile[]): Promise<void> {
  if (entry.isFile) {
    const file = await new Promise<File>((resolve, reject) => (entry as FileSystemFileEntry).file(resolve, reject));
    out.push({ name: prefix + entry.name, file });
    return;
  }
  const reader = (entry as FileSystemDirectoryEntry).createReader();
  // readEntries returns at most ~100 entries a call: read until it returns none.
  for (;;) {
    const batch = await new Promise<FileSystemEntry[]>((resolve, reject) => reader.readEntries(resolve, reject));
    if (batch.length === 0) break;
    for (const child of batch) await walkEntry(child, `${prefix}${entry.name}/`, out);
  }
}

export async function namedFromDrop(dt: DataTransfer): Promise<NamedFile[]> {
  const out: NamedFile[] = [];
  const entries = Array.from(dt.items ?? [])
    .map((item) => item.webkitGetAsEntry?.())
    .filter((e): e is FileSystemEntry => !!e);
  if (entries.length === 0) return namedFromInput(Array.from(dt.files));
  for (const entry of entries) await walkEntry(entry, '', out);
  return out;
}

/**
 * The supported files, to be read one by one as the import workers take them; unsupported extensions are returned
 * by name so the page can list them.
 */
export async function readFiles(files: readonly NamedFile[]): Promise<{ inputs: FileInput[]; skipped: string[] }> {
  const inputs: FileInput[] = [];
  const skipped: string[] = [];
  for (const f of files) {
    if (!formatOf(f.name)) {
      skipped.push(f.name);
      continue;
    }
    inputs.push({ name: f.name, bytes: f.file });
  }
  return { inputs, skipped };
}
