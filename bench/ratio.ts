// `npm run bench:ratio`: the same reference training step (B = 32 pairs, N = 512, 64-128-256, head 256-128,
// NT-Xent, Adam) in tfjs-wasm in Node, in tfjs-wasm in a browser training worker (Debian's Chromium, headless),
// and in PyTorch (Debian's python3-torch, OpenBLAS, 2 threads), measured in one run; prints the time ratios.

import { execFileSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { initBackend } from '../src/core/model/backend';
import { REFERENCE_ENCODER, timeStep } from './speed';
import { chromiumAvailable, launch } from '../test/browser/chromium';
import { build, preview } from 'vite';
import { fmt, report } from './timing';

const python = '/usr/bin/python3';
let torch: { ms_per_step: number; min_ms: number; threads: number; torch: string } | null = null;
if (existsSync(python)) {
  try {
    const out = execFileSync(python, ['bench/torch_step.py', '2'], {
      env: { ...process.env, OPENBLAS_NUM_THREADS: '2' },
      encoding: 'utf8',
    });
    torch = JSON.parse(out.trim().split('\n').pop()!);
  } catch (err) {
    console.warn(
      `PyTorch reference not run (${(err as Error).message.split('\n')[0]}); install it with: apt-get install -y python3-torch libopenblas0-pthread`,
    );
  }
}
await initBackend({ prefer: 'wasm' });
const node = timeStep(REFERENCE_ENCODER, 32, 512, 9);

let browser: { msPerStep: number; backend: string } | null = null;
if (chromiumAvailable()) {
  // The benchmark page is built on its own (bench/browser), production-minified like the workbench.
  const configFile = 'bench/browser/vite.config.ts';
  await build({ configFile });
  const server = await preview({ configFile });
  const url = server.resolvedUrls?.local[0];
  const ctx = await launch();
  try {
    if (!url) throw new Error('the preview server reported no URL');
    const page = await ctx.newPage();
    await page.goto(`${url}step.html`);
    browser = await page.evaluate(() =>
      (
        window as unknown as { shapekinBenchStep: (r: number) => Promise<{ msPerStep: number; backend: string }> }
      ).shapekinBenchStep(9),
    );
  } finally {
    await ctx.close();
    await server.close();
  }
} else console.warn('browser worker not measured: no Chromium at /usr/bin/chromium');

const rows: [string, string][] = [['tfjs-wasm in Node (1 thread)', `${fmt(node, 0)} ms a step`]];
if (browser)
  rows.push([`tfjs-${browser.backend} in a Chromium worker (1 thread)`, `${fmt(browser.msPerStep, 0)} ms a step`]);
if (torch) {
  rows.push([
    `PyTorch ${torch.torch} + OpenBLAS, ${torch.threads} threads`,
    `${fmt(torch.ms_per_step, 0)} ms a step (min ${fmt(torch.min_ms, 0)})`,
  ]);
  rows.push(['ratio Node tfjs / PyTorch', fmt(node / torch.ms_per_step, 2)]);
  if (browser) rows.push(['ratio browser worker / PyTorch', fmt(browser.msPerStep / torch.ms_per_step, 2)]);
}
report('reference training step: tfjs against PyTorch, one run', rows);
