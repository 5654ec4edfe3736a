// `npm run bench:ratio`: the same reference training step in tfjs-wasm (Node) and in PyTorch (Debian's
// python3-torch, OpenBLAS, 2 threads), measured in one run, and the time ratio tfjs / PyTorch.

import { execFileSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { initBackend } from '../src/core/model/backend';
import { REFERENCE, timeStep } from './model';
import { fmt, report } from './timing';

const python = '/usr/bin/python3';
let torch: { ms_per_step: number; min_ms: number; threads: number; torch: string } | null = null;
if (existsSync(python)) {
  try {
    const out = execFileSync(python, ['bench/torch_step.py', '2'], { env: { ...process.env, OPENBLAS_NUM_THREADS: '2' }, encoding: 'utf8' });
    torch = JSON.parse(out.trim().split('\n').pop()!);
  } catch (err) {
    console.warn(`PyTorch reference not run (${(err as Error).message.split('\n')[0]}); install it with: apt-get install -y python3-torch libopenblas0-pthread`);
  }
}
await initBackend({ prefer: 'wasm' });
const tfjs = timeStep(REFERENCE, 32, 512, 9);
const rows: [string, string][] = [['tfjs-wasm (Node, 1 thread): reference step', `${fmt(tfjs, 0)} ms`]];
if (torch) {
  rows.push([`PyTorch ${torch.torch} + OpenBLAS, ${torch.threads} threads`, `${fmt(torch.ms_per_step, 0)} ms (min ${fmt(torch.min_ms, 0)})`]);
  rows.push(['time ratio tfjs-wasm / PyTorch', fmt(tfjs / torch.ms_per_step, 2)]);
}
report('reference step: tfjs against PyTorch', rows);
