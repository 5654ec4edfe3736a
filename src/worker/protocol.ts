// The typed message protocol between the page and its workers. Every request carries an id; replies
// carry the same id, and the client drops replies to requests it no longer waits for.

import type { LibraryPart, SamplingSettings } from '../core/library';
import type { ImportFailure } from '../core/mesh/import';

export interface FileInput {
  readonly name: string;
  readonly buffer: ArrayBuffer;
}

export type LibraryRequest = {
  readonly type: 'import';
  readonly id: number;
  readonly files: readonly FileInput[];
  readonly sampling: SamplingSettings;
  readonly maxBytes?: number;
};

export type LibraryReply =
  | { readonly type: 'progress'; readonly id: number; readonly done: number; readonly total: number; readonly file: string }
  | { readonly type: 'part'; readonly id: number; readonly part: LibraryPart }
  | { readonly type: 'failed'; readonly id: number; readonly failure: ImportFailure }
  | { readonly type: 'done'; readonly id: number; readonly ms: number };

/** The typed arrays of a part, to move (not copy) across the boundary. */
export function partTransfers(part: LibraryPart): ArrayBuffer[] {
  return [part.points.buffer, part.normals.buffer, part.meshPositions.buffer, part.meshIndices.buffer] as ArrayBuffer[];
}
