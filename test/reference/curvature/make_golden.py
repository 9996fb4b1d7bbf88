#!/usr/bin/python3
"""Golden values for the curvature readouts: dense symmetric eigenvalues (numpy.linalg.eigvalsh),
extreme eigenvalues of matrices a few hundred wide and of a small tanh network's Hessian and
Gauss-Newton matrix (torch.linalg.eigvalsh on torch.autograd.functional.hessian), and the loss
along the network's top Hessian eigenvector.

Run with Debian's interpreter from the repository root:

    /usr/bin/python3 test/reference/curvature/make_golden.py

It rewrites test/reference/curvature/golden.json next to this script (library versions inside).

Every test matrix is defined by a formula over a 32-bit integer hash that the TypeScript side
(test/reference/curvature/fixtures.ts) reproduces exactly, so no matrix is stored here; only the
numbers numpy / torch compute from them are expected values. The network case (architecture,
data, weights) is invented from the same hash and written out in full in the spec format.
"""
import json
import math
import os
import platform
import sys

import numpy as np
import scipy
import torch

torch.set_num_threads(1)
torch.set_default_dtype(torch.float64)

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "golden.json")
M32 = 0xFFFFFFFF


def mix(x):
    x = (x ^ (x >> 15)) & M32
    x = (x * 0x2C1B3C6D) & M32
    x = (x ^ (x >> 12)) & M32
    x = (x * 0x297A2D39) & M32
    x = (x ^ (x >> 15)) & M32
    return x


def hash_uniform(seed, i, j):
    """Uniform in [-0.5, 0.5), exactly representable; mirrors fixtures.ts hashUniform."""
    h = (seed * 0x9E3779B1 + i * 0x85EBCA77 + j * 0xC2B2AE3D) & M32
    h = mix(mix(h) ^ seed)
    return h / 4294967296.0 - 0.5


def random_symmetric(n, seed):
    a = np.zeros((n, n))
    for i in range(n):
        for j in range(i + 1):
            a[i, j] = a[j, i] = hash_uniform(seed, i, j)
    return a


def reflector(n, seed):
    v = np.array([hash_uniform(seed, k, 0) for k in range(n)])
    return np.eye(n) - 2.0 * np.outer(v, v) / v.dot(v)


def repeated_spectrum(n, seed):
    d = [3.0] * 5 + [-1.0] * 4 + [0.0] * 3 + [4.0 * hash_uniform(seed, k, n) for k in range(12, n)]
    return np.array(d)


def repeated(n, seed):
    q = reflector(n, seed + 1) @ reflector(n, seed + 2)
    return q @ np.diag(repeated_spectrum(n, seed)) @ q.T


def diagonal(n, seed):
    return np.diag([math.floor(hash_uniform(seed, i, 0) * 8) / 2 for i in range(n)])


def tridiagonal(n, seed):
    a = np.zeros((n, n))
    for i in range(n):
        a[i, i] = hash_uniform(seed, i, 0)
        if i > 0:
            a[i, i - 1] = a[i - 1, i] = hash_uniform(seed, i, 1)
    return a


def wilkinson(n):
    m = (n - 1) / 2
    a = np.diag([abs(m - i) for i in range(n)])
    for i in range(1, n):
        a[i, i - 1] = a[i - 1, i] = 1.0
    return a


def spiked(n, seed):
    """Narrow random bulk plus five rank-one spikes of both signs: an indefinite Hessian-like spectrum."""
    a = 0.25 * math.sqrt(12.0 / n) * random_symmetric(n, seed)
    for k, c in enumerate([40.0, 25.0, 12.0, -15.0, -6.0]):
        x = np.array([hash_uniform(seed + 10 + k, i, 0) for i in range(n)])
        a += c * np.outer(x, x) / x.dot(x)
    return a


def graded(n, seed):
    """Random symmetric matrix plus a graded diagonal from -3 to 5."""
    a = 0.3 * math.sqrt(12.0 / n) * random_symmetric(n, seed)
    for i in range(n):
        a[i, i] += -3.0 + 8.0 * (i / (n - 1)) ** 2
    return a


DENSE = [
    ("random-1", lambda: random_symmetric(1, 11)),
    ("random-2", lambda: random_symmetric(2, 12)),
    ("random-3", lambda: random_symmetric(3, 13)),
    ("random-50", lambda: random_symmetric(50, 14)),
    ("random-200", lambda: random_symmetric(200, 15)),
    ("repeated-60", lambda: repeated(60, 16)),
    ("diagonal-40", lambda: diagonal(40, 17)),
    ("tridiagonal-80", lambda: tridiagonal(80, 18)),
    ("wilkinson-21", lambda: wilkinson(21)),
]
EXTREME = [
    ("spiked-300", lambda: spiked(300, 21)),
    ("graded-400", lambda: graded(400, 22)),
]


def network_case():
    """4-16-16-1 tanh MLP (linear output) on 40 invented rows, mse; weights LeCun-uniform from the hash."""
    sizes = [4, 16, 16, 1]
    acts = ["tanh", "tanh", "linear"]
    rows = 40
    x = [[round(2.0 * hash_uniform(31, r, c), 6) for c in range(sizes[0])] for r in range(rows)]
    y = [[round(math.sin(2.0 * xr[0]) + xr[1] * xr[2] - 0.5 * xr[3] + 0.1 * hash_uniform(32, r, 0), 6)] for r, xr in enumerate(x)]
    weights = []
    for l, (fan_in, fan_out) in enumerate(zip(sizes[:-1], sizes[1:])):
        bound = math.sqrt(3.0 / fan_in) * 2.0
        W = [[round(bound * hash_uniform(40 + l, o, i), 6) for i in range(fan_in)] for o in range(fan_out)]
        b = [round(0.2 * hash_uniform(50 + l, o, 0), 6) for o in range(fan_out)]
        weights.append({"weight": W, "bias": b})
    spec = {
        "seed": 7,
        "model": {"inputs": sizes[0], "layers": [{"units": u, "activation": a} for u, a in zip(sizes[1:], acts)], "weights": weights},
        "data": {"x": x, "y": y},
        "loss": "mse",
        "recipe": {"optimizer": "sgd", "lr": 0.1},
    }
    flat = []
    for wl in weights:
        for row in wl["weight"]:
            flat.extend(row)
        flat.extend(wl["bias"])
    w0 = torch.tensor(flat)
    X = torch.tensor(x)
    Y = torch.tensor(y)

    def outputs(w):
        h, k = X, 0
        for (fan_in, fan_out), act in zip(zip(sizes[:-1], sizes[1:]), acts):
            W = w[k:k + fan_in * fan_out].reshape(fan_out, fan_in)
            k += fan_in * fan_out
            b = w[k:k + fan_out]
            k += fan_out
            a = h @ W.T + b
            h = torch.tanh(a) if act == "tanh" else a
        return h

    def loss(w):
        return ((outputs(w) - Y) ** 2).mean()

    H = torch.autograd.functional.hessian(loss, w0)
    H = 0.5 * (H + H.T)
    J = torch.autograd.functional.jacobian(outputs, w0).reshape(rows * sizes[-1], -1)
    G = (2.0 / (rows * sizes[-1])) * J.T @ J
    evals, evecs = torch.linalg.eigh(H)
    u = evecs[:, -1]
    if u[torch.argmax(u.abs())] < 0:
        u = -u
    ts = [-1.0 + 0.1 * k for k in range(21)]
    profile = [loss(w0 + t * u).item() for t in ts]
    # per-layer diagonal blocks of H (weight + bias of one layer)
    blocks, k = [], 0
    for fan_in, fan_out in zip(sizes[:-1], sizes[1:]):
        size = fan_in * fan_out + fan_out
        blocks.append(torch.linalg.eigvalsh(H[k:k + size, k:k + size])[-1].item())
        k += size
    gevals = torch.linalg.eigvalsh(G)
    return {
        "spec": spec,
        "parameterCount": int(w0.numel()),
        "loss": loss(w0).item(),
        "hessianEigenvalues": torch.linalg.eigvalsh(H).tolist(),
        "hessianTrace": torch.trace(H).item(),
        "gaussNewtonEigenvalues": gevals.tolist(),
        "gaussNewtonTrace": torch.trace(G).item(),
        "layerBlockLambdaMax": blocks,
        "topEigenvector": u.tolist(),
        "profile": {"t": ts, "loss": profile},
    }


def ce_network_case():
    """8-24-24-3 tanh MLP with softmax cross-entropy on 60 invented rows (P = 891).

    Nothing is stored but the results: fixtures.ts rebuilds the same weights and data from the hash
    (x = 2u, class = floor(3(u + 1/2)), W = 2·sqrt(3/fan_in)·u, b = 0.2u)."""
    sizes = [8, 24, 24, 3]
    rows = 60
    X = torch.tensor([[2.0 * hash_uniform(61, r, c) for c in range(sizes[0])] for r in range(rows)])
    Y = torch.tensor([math.floor(3.0 * (hash_uniform(62, r, 0) + 0.5)) for r in range(rows)])
    flat = []
    for l, (fan_in, fan_out) in enumerate(zip(sizes[:-1], sizes[1:])):
        bound = math.sqrt(3.0 / fan_in) * 2.0
        flat.extend(bound * hash_uniform(70 + l, o, i) for o in range(fan_out) for i in range(fan_in))
        flat.extend(0.2 * hash_uniform(80 + l, o, 0) for o in range(fan_out))
    w0 = torch.tensor(flat)

    def logits(w):
        h, k = X, 0
        for l, (fan_in, fan_out) in enumerate(zip(sizes[:-1], sizes[1:])):
            W = w[k:k + fan_in * fan_out].reshape(fan_out, fan_in)
            k += fan_in * fan_out
            b = w[k:k + fan_out]
            k += fan_out
            a = h @ W.T + b
            h = torch.tanh(a) if l < len(sizes) - 2 else a
        return h

    def loss(w):
        return torch.nn.functional.cross_entropy(logits(w), Y)

    H = torch.autograd.functional.hessian(loss, w0)
    H = 0.5 * (H + H.T)
    ev = torch.linalg.eigvalsh(H)
    return {
        "sizes": sizes,
        "rows": rows,
        "parameterCount": int(w0.numel()),
        "loss": loss(w0).item(),
        "top5": ev[-5:].flip(0).tolist(),
        "bottom5": ev[:5].tolist(),
        "trace": torch.trace(H).item(),
        "eigenvalues": ev.tolist(),
    }


def main():
    out = {
        "generator": "test/reference/curvature/make_golden.py",
        "command": "/usr/bin/python3 test/reference/curvature/make_golden.py",
        "versions": {
            "python": platform.python_version(),
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "torch": torch.__version__,
        },
        "dense": {},
        "extreme": {},
    }
    for name, make in DENSE:
        a = make()
        out["dense"][name] = {"n": a.shape[0], "eigenvalues": np.linalg.eigvalsh(a).tolist()}
    for name, make in EXTREME:
        a = make()
        ev = torch.linalg.eigvalsh(torch.tensor(a))
        out["extreme"][name] = {
            "n": a.shape[0],
            "top5": ev[-5:].flip(0).tolist(),
            "bottom5": ev[:5].tolist(),
            "trace": float(np.trace(a)),
            "eigenvalues": ev.tolist(),
        }
    out["network"] = network_case()
    out["crossEntropyNetwork"] = ce_network_case()
    with open(OUT, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(f"wrote {OUT}", file=sys.stderr)


if __name__ == "__main__":
    main()
