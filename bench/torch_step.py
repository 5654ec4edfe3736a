#!/usr/bin/env python3
"""The reference training step in PyTorch, for the time ratio against tfjs: the same per-point MLP
(64-128-256 on x, y, z), max pooling, projection head 256-128, NT-Xent (tau = 0.1) and Adam, on B = 32 pairs
of N = 512 points. Run with Debian's python3-torch and OpenBLAS on 2 threads:
    OPENBLAS_NUM_THREADS=2 /usr/bin/python3 bench/torch_step.py
Prints one JSON line: {"ms_per_step": ..., "threads": ..., "torch": ...}.
"""
import json
import sys
import time

import torch

torch.manual_seed(0)
torch.set_num_threads(int(sys.argv[1]) if len(sys.argv) > 1 else 2)
B, N = 32, 512
widths = [3, 64, 128, 256]
point = torch.nn.Sequential(*[m for i in range(3) for m in (torch.nn.Linear(widths[i], widths[i + 1]), torch.nn.ReLU())])
head = torch.nn.Sequential(torch.nn.Linear(256, 256), torch.nn.ReLU(), torch.nn.Linear(256, 128))
params = list(point.parameters()) + list(head.parameters())
opt = torch.optim.Adam(params, lr=1e-3)
x = torch.rand(2 * B, N, 3) * 2 - 1


def nt_xent(z, tau=0.1):
    z = torch.nn.functional.normalize(z, dim=1)
    sim = z @ z.t() / tau
    sim.fill_diagonal_(-1e9)
    target = torch.cat([torch.arange(B, 2 * B), torch.arange(0, B)])
    return torch.nn.functional.cross_entropy(sim, target)


def step():
    opt.zero_grad()
    h = point(x.reshape(2 * B * N, 3)).reshape(2 * B, N, 256)
    pooled = h.max(dim=1).values
    loss = nt_xent(head(pooled))
    loss.backward()
    opt.step()
    return loss.item()


for _ in range(3):
    step()
times = []
for _ in range(10):
    t0 = time.perf_counter()
    step()
    times.append((time.perf_counter() - t0) * 1000)
times.sort()
print(json.dumps({"ms_per_step": times[len(times) // 2], "min_ms": times[0], "threads": torch.get_num_threads(), "torch": torch.__version__}))
