// The bundled demo library (demo-shapes/), listed at build time so it ships with the workbench.

import type { FileInput } from '../worker/protocol';

const urls = import.meta.glob('/demo-shapes/**/*.{stl,obj,ply,off,xyz}', {
  query: '?url',
  import: 'default',
  eager: true,
}) as Record<string, string>;

export const DEMO_FILE_COUNT = Object.keys(urls).length;

/** Fetch every demo file; names are paths inside demo-shapes/, so folders become labels. */
export async function fetchDemoLibrary(): Promise<FileInput[]> {
  const entries = Object.entries(urls).sort(([a], [b]) => a.localeCompare(b));
  return Promise.all(
    entries.map(async ([path, url]) => {
      const response = await fetch(url);
      if (!response.ok) throw new Error(`demo file ${path}: HTTP ${response.status}`);
      return { name: path.replace(/^\/demo-shapes\//, ''), bytes: await response.arrayBuffer() };
    }),
  );
}
