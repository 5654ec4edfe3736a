// A part's point cloud (its 2,048-point pool with normals, 48 KB) is kept on the page only until the part is
// written to the parts database, as its mesh is (meshes.ts). After that, training, embedding and the measurements
// fetch the clouds they need from the database a chunk at a time and hand them straight on to their worker, and a
// view fetches the one it shows (a few kept). A restored library comes without clouds. At 20,000 parts the pools
// were about 1 GB of the tab's memory (measured: 1.8–2.2 GB in all, with a 1.5 GB target).

import type { PartClouds } from '../../core/db/workbench';
import type { LibraryPart } from '../../core/library';
import { fileFrameBoxRatio } from '../../core/points/pca';
import type { PartArrays } from '../../worker/protocol';
import { loadClouds } from './library-db';
import type { CloudSource } from './train-client';

export type { PartClouds };

/** Parts whose cloud is in the database only. */
const away = new WeakSet<LibraryPart>();
/** Each part's file-frame box ratio (the default pose reads it), worked out before its cloud goes. */
const ratios = new WeakMap<LibraryPart, number>();
/** The page's own clouds as one object per part, so a view given the same part sees the same object. */
const own = new WeakMap<LibraryPart, PartClouds>();
/** Clouds fetched back for the views, newest last (a view shows two parts at a time). */
const recent = new Map<string, PartClouds>();
const RECENT = 16;

const EMPTY = new Float32Array(0);

/** Whether the part's cloud must be fetched from the database. */
export const cloudAway = (p: LibraryPart): boolean => away.has(p);

/** The part came from the database without its cloud; `boxRatio` is its file-frame box ratio, worked out there. */
export function cameWithoutCloud(p: LibraryPart, boxRatio: number): void {
  ratios.set(p, boxRatio);
  away.add(p);
}

/** The part is in the database now: its cloud goes (its box ratio is worked out first). */
export function cloudWritten(p: LibraryPart): void {
  if (away.has(p)) return;
  boxRatioOf(p);
  // The part object stays the same (the library, the index and the save know it by identity); only its cloud goes.
  const m = p as { points: Float32Array; normals: Float32Array };
  m.points = EMPTY;
  m.normals = EMPTY;
  own.delete(p);
  away.add(p);
}

/** Whether the part's box ratio is known already. */
export const hasBoxRatio = (p: LibraryPart): boolean => ratios.has(p);

/** How much larger the part's box is in its file's axes than in its principal axes (points/pca.ts). */
export function boxRatioOf(p: LibraryPart): number {
  let r = ratios.get(p);
  if (r === undefined) {
    if (away.has(p)) throw new Error(`${p.name}: its cloud is not on the page`);
    ratios.set(p, (r = fileFrameBoxRatio(p.points)));
  }
  return r;
}

/** The part's cloud if the page has it now (its own, or fetched back lately), else null. */
export function cloudNow(p: LibraryPart): PartClouds | null {
  if (away.has(p)) return recent.get(p.name) ?? null;
  let c = own.get(p);
  if (!c) own.set(p, (c = { name: p.name, points: p.points, normals: p.normals }));
  return c;
}

/** The part's cloud, fetched from the database when the page no longer has it (kept among the recent ones). */
export async function cloudOf(p: LibraryPart): Promise<PartClouds> {
  const now = cloudNow(p);
  if (now) return now;
  const [cloud] = await loadClouds([p.name]);
  if (!cloud) throw new Error(`${p.name}: its point cloud is not in the parts database`);
  recent.delete(p.name);
  recent.set(p.name, cloud);
  while (recent.size > RECENT) recent.delete(recent.keys().next().value!);
  return cloud;
}

/**
 * The parts' clouds as arrays the caller owns, in order, to hand over to a worker: copies of those the page has,
 * and those it let go fetched from the database in one request (not kept: a chunk of a whole-library job).
 */
export async function cloudsToHand(parts: readonly LibraryPart[]): Promise<PartArrays[]> {
  const missing = parts.filter((p) => away.has(p) && !recent.has(p.name)).map((p) => p.name);
  const fetched = new Map((missing.length ? await loadClouds(missing) : []).map((c) => [c.name, c]));
  return parts.map((p) => {
    const c = fetched.get(p.name);
    if (c) return { points: c.points, normals: c.normals };
    const now = cloudNow(p);
    if (!now) throw new Error(`${p.name}: its point cloud is not in the parts database`);
    return { points: now.points.slice(), normals: now.normals.slice() };
  });
}

/** The parts' clouds as a whole-library job reads them, a chunk at a time (train-client.ts). */
export const librarySource = (parts: readonly LibraryPart[]): CloudSource => ({
  count: parts.length,
  read: (from, to) => cloudsToHand(parts.slice(from, to)),
});
