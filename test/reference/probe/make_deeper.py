#!/usr/bin/python3
"""Golden values for the deeper readouts on a small network whose hidden layer is the user's own
activation x / (1 + |x|) (written as an expression in the spec): the gradient, the loss along the
SGD step and along the top Hessian eigenvector with Brent's minimum on each line, the loss over the
plane of the top two eigenvectors, a learning-rate range test, and the loss with the weights
rounded to k significant bits.

Reference: PyTorch autograd (gradients, Hessian by torch.autograd.functional.hessian), NumPy
(eigh; rounding to k significant bits with frexp/ldexp and np.round, which rounds half to even),
SciPy (scipy.optimize.brent); float64, run with Debian's /usr/bin/python3. Regenerate from the
repository root with

    /usr/bin/python3 test/reference/probe/make_deeper.py

which rewrites test/reference/probe/deeper.json next to this script. Network, data and weights are
invented here from a fixed numpy seed and rounded to 6 decimals, so the spec holds the exact numbers.

Definitions (the engine's, stated in src/core/probe/*.ts): the loss is mse, mean over rows of
(y_hat - y)^2; the update line is phi(t) = f(w + t * dw) with dw = -lr * grad f(w); the eigenvector
line is f(w + t * u) with u the unit eigenvector of the largest Hessian eigenvalue, sign chosen so
that its largest entry in magnitude is positive; the range test applies one SGD update per rate
of the grid from the same start, in order, recording the loss after each.
"""
import datetime
import json
import os
import platform

import numpy as np
import scipy
import scipy.optimize
import torch

torch.set_num_threads(1)
torch.set_default_dtype(torch.float64)

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "deeper.json")
N, D, H = 10, 3, 5
LR = 0.3
rng = np.random.default_rng(7300)
rnd = lambda a: np.round(a, 6)
x = rnd(rng.normal(size=(N, D)))
y = rnd(np.sin(x[:, 0]) - 0.5 * x[:, 1] + 0.1 * rng.normal(size=N)).reshape(N, 1)
W1 = rnd(rng.normal(size=(H, D)) * 0.8)
b1 = rnd(rng.normal(size=H) * 0.1)
W2 = rnd(rng.normal(size=(1, H)) * 0.6)
b2 = rnd(rng.normal(size=1) * 0.1)
shapes = [W1.shape, b1.shape, W2.shape, b2.shape]
sizes = [int(np.prod(s)) for s in shapes]
X, Y = torch.tensor(x), torch.tensor(y)


def unpack(w):
    out, o = [], 0
    for s, n in zip(shapes, sizes):
        out.append(w[o:o + n].reshape(s))
        o += n
    return out


def loss(w):
    a, b, c, d = unpack(w)
    h = X @ a.T + b
    h = h / (1 + h.abs())
    return ((h @ c.T + d - Y) ** 2).mean()


w0 = torch.tensor(np.concatenate([W1.ravel(), b1, W2.ravel(), b2]))
wg = w0.clone().requires_grad_(True)
g = torch.autograd.grad(loss(wg), wg)[0].detach()
Hm = torch.autograd.functional.hessian(loss, w0).numpy()
evals, evecs = np.linalg.eigh(Hm)


def unit_sign(v):
    v = v / np.linalg.norm(v)
    return v if v[np.argmax(np.abs(v))] > 0 else -v


u1, u2 = unit_sign(evecs[:, -1]), unit_sign(evecs[:, -2])
dw = (-LR * g).numpy()
f = lambda w: float(loss(torch.tensor(w)))
w = w0.numpy()

t_update = np.linspace(-0.5, 2.5, 13)
phi_u = lambda t: f(w + t * dw)
t_star_u = float(scipy.optimize.brent(phi_u, brack=(0.0, 1.0), tol=1e-10))
spread = max(np.linalg.norm(dw), abs(float(dw @ u1)))
t_eig = np.linspace(-2 * spread, 2 * spread, 13)
phi_e = lambda t: f(w + t * u1)
t_star_e = float(scipy.optimize.brent(phi_e, brack=(0.0, spread), tol=1e-10))

plane_axis = np.linspace(-0.5, 0.5, 5)
plane = [[f(w + a * u1 + b * u2) for a in plane_axis] for b in plane_axis]

grid = [1e-3 * (3 / 1e-3) ** (k / 11) for k in range(12)]
grid[-1] = 3.0
ws = w0.clone()
range_loss = []
for eta in grid:
    wr = ws.clone().requires_grad_(True)
    gr = torch.autograd.grad(loss(wr), wr)[0]
    ws = (ws - eta * gr).detach()
    range_loss.append(float(loss(ws)))


def round_bits(v, k):
    m, e = np.frexp(v)
    return np.ldexp(np.round(np.ldexp(m, k)), e - k)


precision = [{"bits": k, "loss": f(round_bits(w, k))} for k in [16, 10, 8, 6, 4]]

spec = {
    "seed": 1,
    "model": {"inputs": D, "layers": [{"units": H, "activation": {"expr": "x / (1 + abs(x))"}}, {"units": 1}],
              "weights": [{"weight": W1.tolist(), "bias": b1.tolist()}, {"weight": W2.tolist(), "bias": b2.tolist()}]},
    "data": {"x": x.tolist(), "y": y.tolist()},
    "recipe": {"optimizer": "sgd", "lr": LR},
}
doc = {
    "header": {
        "what": "deeper readouts on a network with an expression activation (softsign)",
        "reference": "PyTorch autograd and functional.hessian, NumPy eigh/frexp/round, scipy.optimize.brent; float64",
        "torch": torch.__version__, "numpy": np.__version__, "scipy": scipy.__version__,
        "python": platform.python_version(),
        "command": "/usr/bin/python3 test/reference/probe/make_deeper.py",
        "date": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d"),
    },
    "spec": spec,
    "loss": f(w),
    "gradient": g.tolist(),
    "update": {"t": t_update.tolist(), "loss": [phi_u(t) for t in t_update], "slope": float(g @ torch.tensor(dw)),
               "curvature": float(dw @ Hm @ dw), "brent": t_star_u, "brentLoss": phi_u(t_star_u)},
    "eigen": {"lambdaMax": float(evals[-1]), "lambda2": float(evals[-2]), "vector": u1.tolist(), "vector2": u2.tolist(),
              "t": t_eig.tolist(), "loss": [phi_e(t) for t in t_eig], "stepAt": float(dw @ u1), "brent": t_star_e, "brentLoss": phi_e(t_star_e)},
    "plane": {"axis": plane_axis.tolist(), "loss": plane},
    "range": {"lr": grid, "loss": range_loss},
    "precision": precision,
}
with open(OUT, "w") as fh:
    json.dump(doc, fh, indent=1)
    fh.write("\n")
print(f"wrote {OUT}")
