import { readFileSync, readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { initBackend } from '../../src/core/model/backend';
import { loadPart } from '../../src/core/library';
import { Trainer, type TrainConfig } from '../../src/core/model/train';
import { DEFAULT_ENCODER } from '../../src/core/model/encoder';
import { PRESETS } from '../../src/core/points/augment';
const backend = await initBackend({ prefer: (process.argv[2] as 'wasm' | 'cpu') ?? 'wasm' });
const root = 'demo-shapes';
const files: string[] = [];
const walk = (d: string) => readdirSync(d).forEach((n) => { const p = join(d, n); statSync(p).isDirectory() ? walk(p) : files.push(p); });
walk(root);
const parts = [];
for (const f of files) { if (f.includes('broken') || !/\.(stl|obj|ply|off)$/.test(f)) continue; const b = readFileSync(f); parts.push(loadPart(b.buffer.slice(b.byteOffset, b.byteOffset + b.length), f.slice(root.length + 1), { points: 2048, seed: 0 })); }
const config: TrainConfig = { encoder: DEFAULT_ENCODER, loss: { name: 'nt-xent', temperature: 0.1, margin: 0.2 }, pipeline: PRESETS['scan-like'], points: 512, batchSize: 32, epochs: 3, learningRate: 1e-3, warmupFraction: 0.1, seed: 1, heldOutFraction: 0.1, evalEvery: 0, patience: 0 };
const tr = new Trainer(parts.map((p) => ({ points: p.points, normals: p.normals })), config);
const res = await tr.run({ onProgress: (p) => console.log(backend, p.step, p.loss.toFixed(4), p.msPerStep.toFixed(0) + ' ms', p.samplesPerSec.toFixed(1)), onCheck: (c) => console.log('check', c) });
console.log(res.status, res.message);
