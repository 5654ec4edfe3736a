// Reads a parts library from disk: every supported file below a folder, labels from labels.csv when it
// names them, else from the sub-folder. Bad files are reported and skipped.

import { readFileSync, readdirSync, statSync, existsSync } from 'node:fs';
import { join, relative, sep } from 'node:path';
import { failureOf, labelFromPath, loadPart, type LibraryPart } from '../core/library';
import type { ImportFailure } from '../core/mesh/import';
import { DEFAULT_MAX_BYTES, isSupportedFile } from '../core/mesh/import';
import { FORMAT_NAMES } from '../core/mesh/formats';
import { POOL_POINTS } from '../core/model/defaults';
import { Progress } from './progress';
import { CliError } from './errors';
import { importInThreads } from './import-pool';
import { prepareToRead, readBytes } from './read-file';
import { parseCsv } from '../core/csv';

export interface LoadedLibrary {
  readonly root: string;
  readonly parts: LibraryPart[];
  readonly labels: string[];
  readonly failures: ImportFailure[];
}

export function listFiles(root: string): string[] {
  if (!existsSync(root)) throw new CliError(`library folder not found: ${root}`);
  if (!statSync(root).isDirectory()) throw new CliError(`not a folder: ${root}`);
  const out: string[] = [];
  const walk = (dir: string) => {
    for (const name of readdirSync(dir).sort()) {
      if (name.startsWith('.')) continue;
      const p = join(dir, name);
      if (statSync(p).isDirectory()) walk(p);
      else if (isSupportedFile(name) && !(dir === root && name === 'labels.csv')) out.push(p);
    }
  };
  walk(root);
  return out;
}

/** labels.csv with a header naming a `file` column and a `family` or `label` column. */
export function readLabelsCsv(root: string): Map<string, string> | null {
  const path = join(root, 'labels.csv');
  if (!existsSync(path)) return null;
  const rows = parseCsv(readFileSync(path, 'utf8'));
  if (rows.length === 0) return null;
  const head = rows[0].map((h) => h.trim().toLowerCase());
  const fi = head.indexOf('file');
  const li = head.indexOf('family') >= 0 ? head.indexOf('family') : head.indexOf('label');
  if (fi < 0 || li < 0) return null;
  const map = new Map<string, string>();
  for (const cols of rows.slice(1)) {
    if (cols[fi] && cols[li]) map.set(cols[fi].trim().split('\\').join('/'), cols[li].trim());
  }
  return map;
}

/** Below this many files the pool's start-up (a thread loads the readers) costs more than it saves. */
const POOL_MIN_FILES = 16;

export async function loadLibrary(
  root: string,
  options: { quiet?: boolean; seed?: number; points?: number; maxBytes?: number; threads?: number } = {},
): Promise<LoadedLibrary> {
  const files = listFiles(root);
  if (files.length === 0) throw new CliError(`no part files (${FORMAT_NAMES}) under ${root}`);
  const csv = readLabelsCsv(root);
  const progress = new Progress('reading', files.length, options.quiet);
  const sampling = { points: options.points ?? POOL_POINTS, seed: options.seed ?? 0 };
  const cap = options.maxBytes ?? DEFAULT_MAX_BYTES;
  const named = files.map((path) => ({
    path,
    name: relative(root, path).split(sep).join('/'),
    bytes: statSync(path).size,
  }));
  const parts: LibraryPart[] = [];
  const failures: ImportFailure[] = [];
  const threads = options.threads ?? 1;
  if (threads > 1 && files.length >= POOL_MIN_FILES) {
    await importInThreads(named, { threads, sampling, maxBytes: cap }, (i, r) => {
      if (r.kind === 'part') parts.push(r.part);
      else failures.push(r.failure);
      progress.update(i + 1, named[i].name);
    });
  } else {
    for (const [i, { path, name }] of named.entries()) {
      try {
        await prepareToRead(path, name, cap);
        parts.push(loadPart(readBytes(path), name, sampling, cap));
      } catch (err) {
        failures.push(failureOf(name, err));
      }
      progress.update(i + 1, name);
    }
  }
  progress.done();
  const labels = parts.map((p) => csv?.get(p.name) ?? labelFromPath(p.name));
  return { root, parts, labels, failures };
}

export function reportFailures(failures: readonly ImportFailure[], json: boolean): void {
  if (json) return;
  for (const f of failures) process.stderr.write(`skipped ${f.file}: ${f.reason}\n`);
}
