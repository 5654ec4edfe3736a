// Build of the benchmark page alone (bench/browser/step.html), so the product build carries no benchmark code.
import { fileURLToPath } from 'node:url';
import { defineConfig } from 'vite';

const here = fileURLToPath(new URL('.', import.meta.url));

export default defineConfig({
  root: here,
  base: './',
  logLevel: 'silent',
  worker: { format: 'es' },
  build: {
    outDir: '/tmp/shapekin-bench-page',
    emptyOutDir: true,
    target: 'es2022',
    rollupOptions: { input: `${here}step.html` },
  },
  preview: { port: 0, strictPort: false, open: false },
});
