// Temporary folders for a test file's files, removed when its tests end (`afterAll(removeScratch)`).

import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

const made: string[] = [];

/** A fresh folder in the system's temp folder, named from `prefix`, to be removed by `removeScratch`. */
export function scratchDir(prefix: string): string {
  const dir = mkdtempSync(join(tmpdir(), prefix));
  made.push(dir);
  return dir;
}

/** Removes every folder `scratchDir` made in this test file. */
export function removeScratch(): void {
  for (const dir of made.splice(0)) rmSync(dir, { recursive: true, force: true });
}
