#!/usr/bin/python3
"""Golden values for the diagnosis readouts: activation statistics of dense networks, per-layer
norms along optimizer trajectories with a held-out split, and the simple gradient noise scale.

Reference: PyTorch (autograd, torch.optim) and NumPy in float64, run with Debian's
/usr/bin/python3. Regenerate from the repository root with

    /usr/bin/python3 test/reference/probe/make_golden.py

which rewrites test/reference/probe/golden.json next to this script. The networks, data and
weights are invented here from fixed numpy seeds and rounded to 6 decimals, so the JSON specs
hold the exact numbers torch used; only what torch and numpy compute from them is expected.

Definitions (the engine's, stated in src/core/probe/*.ts):
  * pre-activation a_l = h_{l-1} W_l^T + b_l over all rows; mean and population standard
    deviation over all rows x units entries of a layer;
  * saturated share: share of entries with |a| > 2 (tanh) or |a| > 4 (sigmoid);
  * dead share (relu, leaky-relu): share of units whose a <= 0 on every row;
  * histogram: 24 bins of width 0.5 on [-6, 6), bin floor((a + 6) / 0.5), plus counts below -6
    and at or above 6;
  * per step k (after update k): ||W_l|| (Frobenius, weight matrix only) after the update,
    ||grad W_l|| of the gradient the update used, ||W_l(after) - W_l(before)|| / ||W_l(before)||,
    the training loss and the held-out loss after the update;
  * noise scale B = tr(Sigma)/|G|^2 with G the full-batch gradient and
    tr(Sigma) = (1/N) sum_i |g_i - G|^2 over the per-example gradients g_i of all N rows.
"""
import datetime
import json
import os
import platform
import sys

import numpy as np
import torch
import torch.nn.functional as F

torch.set_num_threads(1)
torch.set_default_dtype(torch.float64)

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "golden.json")
DIGITS = 6
ACT = {
    "linear": lambda a: a,
    "tanh": torch.tanh,
    "sigmoid": torch.sigmoid,
    "relu": F.relu,
    "leaky-relu": lambda a: F.leaky_relu(a, 0.01),
}
SATURATION = {"tanh": 2.0, "sigmoid": 4.0}
DYING = {"relu", "leaky-relu"}


def rnd(a):
    return np.round(a, DIGITS)


def layers_of(rng, sizes, scale, bias_shift):
    out = []
    for k, (fan_in, fan_out) in enumerate(zip(sizes[:-1], sizes[1:])):
        W = rnd(rng.normal(size=(fan_out, fan_in)) * scale[k] / np.sqrt(fan_in))
        b = rnd(rng.normal(size=fan_out) * 0.2 + bias_shift[k])
        out.append((W, b))
    return out


def forward(layers, acts, x):
    h = torch.tensor(x)
    pres = []
    for (W, b), act in zip(layers, acts):
        a = h @ torch.tensor(W).T + torch.tensor(b)
        pres.append(a)
        h = ACT[act](a)
    return h, pres


def stats(a, act):
    a = a.detach()
    v = a.reshape(-1)
    out = {"preMean": float(v.mean()), "preSpread": float(v.std(unbiased=False))}
    out["saturatedShare"] = float((v.abs() > SATURATION[act]).double().mean()) if act in SATURATION else None
    out["deadShare"] = float((a <= 0).all(dim=0).double().mean()) if act in DYING else None
    k = torch.floor((v + 6.0) / 0.5)
    counts = [int(((k == i) & (v >= -6.0)).sum()) for i in range(24)]
    out["histogram"] = {"counts": counts, "below": int((v < -6.0).sum()), "above": int((v >= 6.0).sum())}
    return out


# name, inputs, [(units, activation)], per-layer weight scale (x fan-in rule), per-layer bias shift, rows
ACTIVATION_CASES = [
    ("tanh-oversized", 3, [(10, "tanh"), (6, "tanh"), (1, "linear")], [4.0, 2.0, 1.0], [0.0, 0.0, 0.0], 40),
    ("sigmoid-wide", 4, [(12, "sigmoid"), (3, "linear")], [5.0, 1.0], [0.0, 0.0], 30),
    ("relu-negative-bias", 2, [(8, "relu"), (5, "relu"), (2, "linear")], [1.4, 1.4, 1.0], [-1.5, 0.0, 0.0], 36),
    ("leaky-relu-mixed", 3, [(6, "leaky-relu"), (4, "tanh"), (2, "linear")], [1.4, 3.0, 1.0], [-0.8, 0.5, 0.0], 25),
]


def activation_case(index, name, inputs, layers, scale, shift, rows):
    rng = np.random.default_rng(3000 + index)
    sizes = [inputs] + [u for u, _ in layers]
    acts = [a for _, a in layers]
    x = rnd(rng.normal(size=(rows, inputs)))
    wl = layers_of(rng, sizes, scale, shift)
    _, pres = forward(wl, acts, x)
    spec = {
        "seed": 1,
        "model": {"inputs": inputs, "layers": [{"units": u, "activation": a} for u, a in layers],
                  "weights": [{"weight": W.tolist(), "bias": b.tolist()} for W, b in wl]},
        "data": {"x": x.tolist(), "y": rnd(rng.normal(size=(rows, sizes[-1]))).tolist()},
        "recipe": {"optimizer": "sgd", "lr": 0.01},
    }
    return {"name": name, "spec": spec, "layers": [stats(a, act) for a, act in zip(pres, acts)]}


def loss_of(kind, out, y):
    if kind == "mse":
        return F.mse_loss(out, y)
    if kind == "cross-entropy":
        return F.cross_entropy(out, y)
    return F.binary_cross_entropy_with_logits(out, y)


def groups(ps, lr, scales):
    return [{"params": ps[2 * k:2 * k + 2], "lr": lr * s} for k, s in enumerate(scales)]


# name, inputs, [(units, activation)], loss, recipe (engine keys), torch optimizer factory, steps
TRAJECTORY_CASES = [
    ("tanh-mse-sgd", 3, [(6, "tanh"), (4, "tanh"), (2, "linear")], "mse",
     {"optimizer": "sgd", "lr": 0.1},
     lambda ps: torch.optim.SGD(ps, lr=0.1), 12),
    ("relu-ce-momentum-decay-layer-scales", 4, [(7, "relu"), (3, "linear")], "cross-entropy",
     {"optimizer": "sgd", "lr": 0.05, "momentum": 0.9, "weightDecay": 0.001, "layers": [{"lrScale": 0.5}, {"lrScale": 2.0}]},
     lambda ps: torch.optim.SGD(groups(ps, 0.05, [0.5, 2.0]), lr=0.05, momentum=0.9, weight_decay=0.001), 14),
    ("sigmoid-bce-adam", 3, [(5, "sigmoid"), (1, "linear")], "binary-cross-entropy",
     {"optimizer": "adam", "lr": 0.02},
     lambda ps: torch.optim.Adam(ps, lr=0.02), 10),
]


def targets(rng, kind, rows, k):
    if kind == "mse":
        y = rnd(rng.normal(size=(rows, k)))
        return y.tolist(), torch.tensor(y)
    if kind == "cross-entropy":
        c = rng.integers(0, k, size=rows)
        return [int(v) for v in c], torch.tensor(c, dtype=torch.long)
    y = (rng.random(size=(rows, k)) > 0.5).astype(np.float64)
    return y.tolist(), torch.tensor(y)


def trajectory_case(index, name, inputs, layers, kind, recipe, factory, steps):
    rng = np.random.default_rng(4000 + index)
    sizes = [inputs] + [u for u, _ in layers]
    acts = [a for _, a in layers]
    x = rnd(rng.normal(size=(24, inputs)))
    hx = rnd(rng.normal(size=(10, inputs)))
    y_json, y = targets(rng, kind, 24, sizes[-1])
    hy_json, hy = targets(rng, kind, 10, sizes[-1])
    wl = layers_of(rng, sizes, [1.2] * len(layers), [0.0] * len(layers))
    ps = []
    for W, b in wl:
        ps += [torch.tensor(W, requires_grad=True), torch.tensor(b, requires_grad=True)]
    opt = factory(ps)
    X, HX = torch.tensor(x), torch.tensor(hx)

    def net(inp):
        h = inp
        for k, act in enumerate(acts):
            h = ACT[act](h @ ps[2 * k].T + ps[2 * k + 1])
        return h

    records = []
    for _ in range(steps):
        before = [ps[2 * k].detach().clone() for k in range(len(acts))]
        opt.zero_grad()
        loss_of(kind, net(X), y).backward()
        grads = [float(ps[2 * k].grad.norm()) for k in range(len(acts))]
        opt.step()
        with torch.no_grad():
            rec = {
                "loss": float(loss_of(kind, net(X), y)),
                "heldOutLoss": float(loss_of(kind, net(HX), hy)),
                "weightNorms": [float(ps[2 * k].norm()) for k in range(len(acts))],
                "gradNorms": grads,
                "updateRatios": [float((ps[2 * k] - before[k]).norm() / before[k].norm()) for k in range(len(acts))],
            }
        records.append(rec)
    spec = {
        "seed": 2,
        "model": {"inputs": inputs, "layers": [{"units": u, "activation": a} for u, a in layers],
                  "weights": [{"weight": W.tolist(), "bias": b.tolist()} for W, b in wl]},
        "loss": kind,
        "data": {"x": x.tolist(), "y": y_json, "heldOut": {"x": hx.tolist(), "y": hy_json}},
        "recipe": dict(recipe, batch="full"),
    }
    return {"name": name, "torch": type(opt).__name__, "steps": steps, "spec": spec, "records": records}


def noise_linear():
    """Closed form with NumPy: a linear model y = W x + b under MSE (mean over N rows and K outputs).
    Per-example gradient of (1/K)|W x_i + b - y_i|^2: (2/K) r_i x_i^T for W and (2/K) r_i for b."""
    rng = np.random.default_rng(5100)
    N, D, K = 9, 3, 2
    x = rnd(rng.normal(size=(N, D)))
    y = rnd(rng.normal(size=(N, K)))
    W = rnd(rng.normal(size=(K, D)) * 0.5)
    b = rnd(rng.normal(size=K) * 0.1)
    r = x @ W.T + b - y
    g = np.concatenate([(2.0 / K) * np.einsum("nk,nd->nkd", r, x).reshape(N, -1), (2.0 / K) * r], axis=1)
    G = g.mean(axis=0)
    tr = float(((g - G) ** 2).sum(axis=1).mean())
    spec = {"seed": 1, "model": {"inputs": D, "layers": [{"units": K, "activation": "linear"}],
                                 "weights": [{"weight": W.tolist(), "bias": b.tolist()}]},
            "data": {"x": x.tolist(), "y": y.tolist()}, "recipe": {"optimizer": "sgd", "lr": 0.1}}
    return {"name": "linear-mse-numpy", "reference": "numpy closed form", "spec": spec, "traceCovariance": tr,
            "gradientSquared": float(G @ G), "noiseScale": tr / float(G @ G)}


def noise_mlp():
    """Per-example gradients from torch autograd, one row at a time, for a tanh network under cross-entropy."""
    rng = np.random.default_rng(5200)
    N, D, H, K = 12, 3, 5, 3
    x = rnd(rng.normal(size=(N, D)))
    c = rng.integers(0, K, size=N)
    wl = layers_of(rng, [D, H, K], [1.0, 1.0], [0.0, 0.0])
    ps = []
    for W, b in wl:
        ps += [torch.tensor(W, requires_grad=True), torch.tensor(b, requires_grad=True)]
    X, Y = torch.tensor(x), torch.tensor(c, dtype=torch.long)

    def grad(rows):
        out = torch.tanh(X[rows] @ ps[0].T + ps[1]) @ ps[2].T + ps[3]
        gs = torch.autograd.grad(F.cross_entropy(out, Y[rows]), ps)
        return torch.cat([t.reshape(-1) for t in gs])

    G = grad(list(range(N)))
    per = torch.stack([grad([i]) for i in range(N)])
    tr = float(((per - G) ** 2).sum(dim=1).mean())
    spec = {"seed": 1, "model": {"inputs": D, "layers": [{"units": H, "activation": "tanh"}, {"units": K, "activation": "linear"}],
                                 "weights": [{"weight": W.tolist(), "bias": b.tolist()} for W, b in wl]},
            "loss": "cross-entropy", "data": {"x": x.tolist(), "y": [int(v) for v in c]}, "recipe": {"optimizer": "sgd", "lr": 0.1}}
    return {"name": "tanh-ce-torch", "reference": "torch autograd per row", "spec": spec, "traceCovariance": tr,
            "gradientSquared": float(G @ G), "noiseScale": tr / float(G @ G)}


def main():
    doc = {
        "header": {
            "what": "activation statistics, per-layer norms and held-out loss along trajectories, gradient noise scale",
            "reference": "PyTorch autograd and torch.optim, NumPy; float64",
            "torch": torch.__version__,
            "numpy": np.__version__,
            "python": platform.python_version(),
            "command": "/usr/bin/python3 test/reference/probe/make_golden.py",
            "date": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d"),
        },
        "activations": [activation_case(i, *c) for i, c in enumerate(ACTIVATION_CASES)],
        "trajectories": [trajectory_case(i, *c) for i, c in enumerate(TRAJECTORY_CASES)],
        "noise": [noise_linear(), noise_mlp()],
    }
    with open(OUT, "w") as fh:
        json.dump(doc, fh, separators=(",", ":"))
        fh.write("\n")
    print(f"wrote {OUT}: {len(doc['activations'])} activation cases, {len(doc['trajectories'])} trajectories, "
          f"{len(doc['noise'])} noise cases, {os.path.getsize(OUT) / 1024:.0f} KiB", file=sys.stderr)


if __name__ == "__main__":
    main()
