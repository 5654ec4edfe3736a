// Serves the production build (dist/) with Vite's preview server for the browser tests.

import { existsSync } from 'node:fs';
import { preview, type PreviewServer } from 'vite';

export async function startPreview(): Promise<{ url: string; close: () => Promise<void> }> {
  if (!existsSync('dist/index.html')) throw new Error('dist/ is missing: run `npm run build` before the browser tests');
  const server: PreviewServer = await preview({
    preview: { port: 0, strictPort: false, open: false },
    logLevel: 'silent',
  });
  const url = server.resolvedUrls?.local[0];
  if (!url) throw new Error('preview server did not report a URL');
  return { url, close: () => server.close() };
}
