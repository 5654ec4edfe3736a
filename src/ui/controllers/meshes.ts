// A part's mesh is kept on the page only until the part is written to the parts database. After that the page
// lets it go and fetches it back from the database when a view shows the part or its thumbnail is drawn (a few
// kept). A restored library comes without meshes. Meshes are most of a real library's bytes (990 KiCad parts:
// 84 KB of mesh a part against 48 KB of point pool), all of them held by the tab before.

import type { PartMesh } from '../../core/db/workbench';
import type { LibraryPart } from '../../core/library';
import { loadMeshes } from './library-db';

export type { PartMesh };

/** Parts whose mesh is in the database only. */
const away = new WeakSet<LibraryPart>();

/** Meshes fetched back, newest last; a view shows two parts at a time. */
const recent = new Map<string, PartMesh>();
const RECENT = 16;

const EMPTY_POSITIONS = new Float32Array(0);
const EMPTY_INDICES = new Uint32Array(0);

/** Whether the part's mesh must be fetched from the database before it is drawn. */
export const meshAway = (p: LibraryPart): boolean => away.has(p);

/** The part came from the database without its mesh. */
export function cameWithoutMesh(p: LibraryPart): void {
  away.add(p);
}

/**
 * The part is in the database now: its mesh goes. (Held until its thumbnail was drawn, the meshes of a large import
 * would stay on the page for as long as the thumbnails take, one part at a time.)
 */
export function markWritten(p: LibraryPart): void {
  if (away.has(p)) return;
  // The part object stays the same (the library, the index and the save know it by identity); only its mesh goes.
  const m = p as { meshPositions: Float32Array; meshIndices: Uint32Array };
  m.meshPositions = EMPTY_POSITIONS;
  m.meshIndices = EMPTY_INDICES;
  away.add(p);
}

/** The part's mesh if the page has it now (its own, or fetched back lately), else null. */
export function meshNow(p: LibraryPart): PartMesh | null {
  if (!away.has(p)) return { name: p.name, positions: p.meshPositions, indices: p.meshIndices };
  return recent.get(p.name) ?? null;
}

/** The part's mesh, fetched from the database when the page no longer has it. */
export async function meshOf(p: LibraryPart): Promise<PartMesh> {
  const now = meshNow(p);
  if (now) return now;
  const [mesh] = await loadMeshes([p.name]);
  if (!mesh) throw new Error(`${p.name}: its mesh is not in the parts database`);
  recent.delete(p.name);
  recent.set(p.name, mesh);
  while (recent.size > RECENT) recent.delete(recent.keys().next().value!);
  return mesh;
}
