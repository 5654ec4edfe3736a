// Captures what the command line prints (console and stderr) for a test to read; vi.restoreAllMocks() ends it.

import { vi } from 'vitest';

export function captureOutput(): { out: string[]; err: string[] } {
  const out: string[] = [];
  const err: string[] = [];
  vi.spyOn(console, 'log').mockImplementation((...a: unknown[]) => {
    out.push(a.join(' '));
  });
  vi.spyOn(console, 'error').mockImplementation((...a: unknown[]) => {
    err.push(a.join(' '));
  });
  vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => {
    err.push(String(s));
    return true;
  });
  return { out, err };
}
