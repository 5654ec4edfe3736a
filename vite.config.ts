import { defineConfig } from 'vite';

// Cross-origin isolation (COOP/COEP) lets the training worker use SharedArrayBuffer and wasm threads
// where the browser allows; it is set on both the dev server and the preview server.
const isolation = {
  'Cross-Origin-Opener-Policy': 'same-origin',
  'Cross-Origin-Embedder-Policy': 'require-corp',
};

export default defineConfig({
  root: '.',
  base: './',
  server: { port: 5173, strictPort: false, headers: isolation },
  preview: { port: 4173, strictPort: false, headers: isolation },
  worker: { format: 'es' },
  // Pre-bundle what the workers import too, so the first start does not re-optimise and reload the page.
  optimizeDeps: {
    include: ['@tensorflow/tfjs', '@tensorflow/tfjs-backend-wasm', 'three', 'lit', 'kd-tree-javascript'],
    // PGlite finds its wasm and data files next to its own modules: pre-bundling would move it away from them.
    exclude: ['@electric-sql/pglite', '@electric-sql/pglite-pgvector'],
  },
  build: {
    outDir: 'dist',
    target: 'es2022',
    // The training worker (tfjs + its kernels) is ~1.9 MB; the page itself stays well under this.
    chunkSizeWarningLimit: 2000,
  },
});
