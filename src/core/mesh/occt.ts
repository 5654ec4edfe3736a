// Loads OpenCascade (occt-import-js, about 10 MB of WebAssembly) once, on the first CAD file, in Node or a
// worker. Its console output is caught, so nothing reaches stdout, and kept for the failure reasons.

import type { OcctHost, OcctModule } from './cad';

let loading: Promise<OcctModule> | null = null;
let loaded: OcctModule | null = null;
const lines: string[] = [];

export const occtHost: OcctHost = {
  take: () => lines.splice(0, lines.length),
  trapped: () => {
    loaded = null;
    loading = null;
  },
};

/**
 * The module, loading it on the first call (and again after it trapped: call this before each CAD file). `wasmUrl` says where the .wasm file is served (the browser
 * build passes the bundler's URL); Node finds it beside the package's script.
 */
export function loadCadReader(wasmUrl?: string): Promise<OcctModule> {
  if (!loading) {
    loading = (async () => {
      const factory = (await import('occt-import-js')).default as unknown as (options: object) => Promise<OcctModule>;
      const keep = (s: string) => {
        if (lines.length < 200) lines.push(String(s));
      };
      const module = await factory({ print: keep, printErr: keep, ...(wasmUrl ? { locateFile: () => wasmUrl } : {}) });
      loaded = module;
      return module;
    })();
    loading.catch(() => {
      loading = null;
    });
  }
  return loading;
}

/** The module if it has been loaded, else null (the synchronous import path asks for it). */
export function cadReader(): OcctModule | null {
  return loaded;
}
