#!/usr/bin/python3
"""Golden values for the network objective: loss, gradient, Hessian-vector and
Gauss-Newton-vector products, dense Hessian spectra, mini-batch gradients, and two
analytic objectives (Rosenbrock, a quadratic).

Reference: PyTorch autograd in float64 (run with Debian's /usr/bin/python3).
Regenerate from the repository root with

    /usr/bin/python3 test/reference/model/make_golden.py

which rewrites test/reference/model/golden.json next to this script. The cases
(architectures, data, weights) are invented here from fixed numpy seeds; only the
numbers computed from them by torch are expected values.

Conventions (the engine's, stated in the project docs):
  * flat parameters, layer by layer: weight [out, in] row-major, then bias [out];
  * a_l = W_l h_{l-1} + b_l, h_l = act_l(a_l), output = h_L;
  * mse = mean over all elements; cross-entropy = mean over rows of -log softmax;
    binary-cross-entropy = mean over elements of the logistic loss on logits;
  * l2 adds 0.5 * l2 * sum ||W||^2 over weight matrices only;
  * the Gauss-Newton product is J^T H_out J v (+ l2 on weight entries), where J is
    the Jacobian of the network output h_L and H_out the Hessian of the loss in h_L.
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
EIGEN_MAX_P = 120
DIGITS = 6  # weights and data are rounded to this many decimals before use

ACT = {
    "linear": lambda a: a,
    "tanh": torch.tanh,
    "sigmoid": torch.sigmoid,
    "relu": F.relu,
    "leaky-relu": lambda a: F.leaky_relu(a, 0.01),
    "softplus": lambda a: F.softplus(a, beta=1.0, threshold=20.0),
    "elu": lambda a: F.elu(a, alpha=1.0),
    "gelu": lambda a: F.gelu(a, approximate="none"),
}
KINKED = {"relu", "leaky-relu"}


def unpack(w, sizes):
    """Views of the flat vector as [(W, b), ...]; sizes = [inputs, units_1, ..., units_L]."""
    out, k = [], 0
    for fan_in, fan_out in zip(sizes[:-1], sizes[1:]):
        W = w[k:k + fan_in * fan_out].reshape(fan_out, fan_in)
        k += fan_in * fan_out
        b = w[k:k + fan_out]
        k += fan_out
        out.append((W, b))
    assert k == w.numel()
    return out


def forward(w, case, x, keep_pre=False):
    h = x
    pre = []
    for (W, b), act in zip(unpack(w, case["sizes"]), case["acts"]):
        a = h @ W.T + b
        pre.append(a)
        h = ACT[act](a)
    return (h, pre) if keep_pre else h


def data_loss(out, case, y):
    loss = case["loss"]
    if loss == "mse":
        return F.mse_loss(out, y, reduction="mean")
    if loss == "cross-entropy":
        return F.cross_entropy(out, y, reduction="mean")
    if loss == "binary-cross-entropy":
        return F.binary_cross_entropy_with_logits(out, y, reduction="mean")
    raise ValueError(loss)


def l2_term(w, case):
    s = torch.zeros(())
    for W, _ in unpack(w, case["sizes"]):
        s = s + (W * W).sum()
    return 0.5 * case["l2"] * s


def weight_mask(case):
    parts = []
    for fan_in, fan_out in zip(case["sizes"][:-1], case["sizes"][1:]):
        parts += [torch.ones(fan_in * fan_out), torch.zeros(fan_out)]
    return torch.cat(parts)


def objective(case, x, y):
    return lambda w: data_loss(forward(w, case, x), case, y) + l2_term(w, case)


def grad_of(f, w):
    w = w.detach().clone().requires_grad_(True)
    val = f(w)
    (g,) = torch.autograd.grad(val, w)
    return float(val), g


def hvp_of(f, w, v):
    """Double backward: H v = d/dw (grad f(w) . v)."""
    w = w.detach().clone().requires_grad_(True)
    (g,) = torch.autograd.grad(f(w), w, create_graph=True)
    (hv,) = torch.autograd.grad(g @ v, w)
    return hv


def gnvp_of(case, x, y, w, v):
    out_fn = lambda ww: forward(ww, case, x)
    out, jv = torch.autograd.functional.jvp(out_fn, w, v)
    loss_fn = lambda o: data_loss(o, case, y)
    _, hjv = torch.autograd.functional.hvp(loss_fn, out.detach(), jv)
    _, jthjv = torch.autograd.functional.vjp(out_fn, w, hjv)
    return jthjv + case["l2"] * weight_mask(case) * v


def dense_hessian(f, w):
    H = torch.autograd.functional.hessian(f, w.detach())
    return 0.5 * (H + H.T)


def dense_gn(case, x, y, w):
    P = w.numel()
    cols = [gnvp_of(case, x, y, w, torch.eye(P)[i]) for i in range(P)]
    G = torch.stack(cols, dim=1)
    return 0.5 * (G + G.T)


# ----------------------------------------------------------------------------------
# case definitions: (name, inputs, [(units, activation), ...] incl. output layer,
#                    loss, l2, rows, mini-batches, extra options)
# ----------------------------------------------------------------------------------
CASES = [
    ("linear-mse-1h", 3, [(4, "linear"), (2, "linear")], "mse", 0.0, 12),
    ("tanh-mse-2h-l2", 3, [(5, "tanh"), (4, "tanh"), (2, "linear")], "mse", 0.01, 14),
    ("sigmoid-ce-1h", 4, [(6, "sigmoid"), (3, "linear")], "cross-entropy", 0.0, 15),
    ("relu-ce-2h-l2", 4, [(6, "relu"), (5, "relu"), (3, "linear")], "cross-entropy", 0.005, 16),
    ("leaky-relu-bce-1h", 3, [(6, "leaky-relu"), (1, "linear")], "binary-cross-entropy", 0.0, 14),
    ("softplus-mse-3h-l2", 2, [(4, "softplus"), (4, "softplus"), (3, "softplus"), (1, "linear")], "mse", 0.02, 12),
    ("elu-bce-2h-l2", 3, [(5, "elu"), (4, "elu"), (2, "linear")], "binary-cross-entropy", 0.01, 13),
    ("gelu-ce-1h-l2", 3, [(7, "gelu"), (3, "linear")], "cross-entropy", 0.01, 15),
    ("gelu-mse-3h", 2, [(4, "gelu"), (4, "gelu"), (4, "gelu"), (2, "linear")], "mse", 0.0, 12),
    ("elu-ce-1h", 4, [(5, "elu"), (4, "linear")], "cross-entropy", 0.0, 16),
    ("leaky-relu-mse-3h-l2", 3, [(5, "leaky-relu"), (4, "leaky-relu"), (3, "leaky-relu"), (1, "linear")], "mse", 0.01, 14),
    ("softplus-ce-2h", 3, [(5, "softplus"), (4, "softplus"), (3, "linear")], "cross-entropy", 0.0, 15),
    ("sigmoid-bce-3h-l2", 2, [(4, "sigmoid"), (4, "sigmoid"), (3, "sigmoid"), (1, "linear")], "binary-cross-entropy", 0.005, 12),
    ("tanh-ce-3h", 3, [(4, "tanh"), (4, "tanh"), (4, "tanh"), (3, "linear")], "cross-entropy", 0.0, 14),
    ("relu-mse-1h", 3, [(8, "relu"), (2, "linear")], "mse", 0.0, 13),
    ("linear-bce-2h-l2", 3, [(4, "linear"), (3, "linear"), (2, "linear")], "binary-cross-entropy", 0.01, 12),
    ("mixed-ce-3h-l2", 3, [(5, "tanh"), (4, "relu"), (4, "gelu"), (3, "linear")], "cross-entropy", 0.01, 15),
    ("mixed-mse-2h", 2, [(5, "elu"), (4, "softplus"), (2, "linear")], "mse", 0.0, 12),
    ("sigmoid-output-mse", 3, [(5, "tanh"), (2, "sigmoid")], "mse", 0.0, 12),
    ("tanh-output-mse-l2", 2, [(6, "gelu"), (1, "tanh")], "mse", 0.01, 12),
    ("no-hidden-ce", 4, [(3, "linear")], "cross-entropy", 0.0, 14),
    ("no-hidden-bce-l2", 4, [(1, "linear")], "binary-cross-entropy", 0.02, 14),
    ("wide-gelu-mse", 6, [(20, "gelu"), (2, "linear")], "mse", 0.0, 20),
    ("deep-tanh-relu-ce-l2", 8, [(16, "tanh"), (12, "relu"), (3, "linear")], "cross-entropy", 0.001, 24),
]
# cases that also get mini-batch values: name -> list of row subsets (unsorted on purpose)
BATCHES = {
    "tanh-mse-2h-l2": [[3, 0, 7, 11], [13, 1, 2, 5, 8, 9]],
    "relu-ce-2h-l2": [[0, 15, 4, 9, 2]],
    "elu-bce-2h-l2": [[6, 1, 12]],
    "gelu-ce-1h-l2": [[10, 3, 5, 7, 14, 0]],
    "sigmoid-output-mse": [[2, 4, 6, 8]],
    "deep-tanh-relu-ce-l2": [[23, 0, 5, 17, 9, 11, 2, 20]],
}


def make_data(rng, inputs, outputs, rows, loss):
    x = np.round(rng.normal(size=(rows, inputs)), DIGITS)
    teacher = rng.normal(size=(inputs, outputs))
    z = x @ teacher
    if loss == "mse":
        y = np.round(np.sin(z) + 0.1 * rng.normal(size=z.shape), DIGITS)
        return x, y.tolist(), torch.tensor(y)
    if loss == "cross-entropy":
        cls = np.argmax(z + 0.3 * rng.normal(size=z.shape), axis=1)
        return x, [int(c) for c in cls], torch.tensor(cls, dtype=torch.long)
    lab = (z + 0.3 * rng.normal(size=z.shape) > 0).astype(np.float64)
    return x, lab.tolist(), torch.tensor(lab)


def draw_weights(rng, sizes):
    layers = []
    for fan_in, fan_out in zip(sizes[:-1], sizes[1:]):
        W = np.round(rng.normal(size=(fan_out, fan_in)) * 1.2 / np.sqrt(fan_in), DIGITS)
        b = np.round(rng.normal(size=fan_out) * 0.3, DIGITS)
        layers.append((W, b))
    return layers


def flat(layers):
    return torch.tensor(np.concatenate([np.concatenate([W.ravel(), b]) for W, b in layers]))


def pre_ok(case, w, x):
    """No relu/leaky-relu pre-activation within 1e-3 of the kink; softplus far below its threshold."""
    _, pre = forward(w, case, x, keep_pre=True)
    for a, act in zip(pre, case["acts"]):
        if act in KINKED and float(a.abs().min()) < 1e-3:
            return False
        if act == "softplus" and float(a.abs().max()) > 10.0:
            return False
    return True


def vec(t):
    return [float(u) for u in t]


def network_case(index, name, inputs, layers, loss, l2, rows):
    rng = np.random.default_rng(1000 + index)
    sizes = [inputs] + [u for u, _ in layers]
    case = {"sizes": sizes, "acts": [a for _, a in layers], "loss": loss, "l2": l2}
    x_np, y_json, y = make_data(rng, inputs, sizes[-1], rows, loss)
    x = torch.tensor(x_np)
    for attempt in range(200):
        wl = draw_weights(rng, sizes)
        w = flat(wl)
        if pre_ok(case, w, x):
            break
    else:
        raise RuntimeError(f"{name}: could not draw weights away from kinks")
    P = w.numel()
    spec = {
        "seed": 1,
        "model": {
            "inputs": inputs,
            "layers": [{"units": u, "activation": a} for u, a in layers],
            "weights": [{"weight": W.tolist(), "bias": b.tolist()} for W, b in wl],
        },
        "data": {"x": x_np.tolist(), "y": y_json},
        "loss": loss,
        "regularization": {"l2": l2},
        "recipe": {"optimizer": "sgd", "lr": 0.1},
    }
    v = torch.tensor(np.random.default_rng(5000 + index).normal(size=P))
    f = objective(case, x, y)
    loss_val, g = grad_of(f, w)
    hv = hvp_of(f, w, v)
    gv = gnvp_of(case, x, y, w, v)
    out = {
        "name": name,
        "P": P,
        "spec": spec,
        "loss": loss_val,
        "gradient": vec(g),
        "v": vec(v),
        "hv": vec(hv),
        "gnv": vec(gv),
    }
    if P <= EIGEN_MAX_P:
        H = dense_hessian(f, w)
        # cross-check the dense Hessian against the double-backward product
        assert torch.allclose(H @ v, hv, rtol=1e-10, atol=1e-12), name
        out["hessianEigenvalues"] = vec(torch.linalg.eigvalsh(H))
        G = dense_gn(case, x, y, w)
        out["gnEigenvalues"] = vec(torch.linalg.eigvalsh(G))
    batches = []
    for rows_idx in BATCHES.get(name, []):
        idx = torch.tensor(rows_idx, dtype=torch.long)
        xb, yb = x[idx], y[idx]
        fb = objective(case, xb, yb)
        lb, gb = grad_of(fb, w)
        batches.append({
            "rows": rows_idx,
            "loss": lb,
            "gradient": vec(gb),
            "hv": vec(hvp_of(fb, w, v)),
            "gnv": vec(gnvp_of(case, xb, yb, w, v)),
        })
    if batches:
        out["batches"] = batches
    return out


# ----------------------------------------------------------------------------------
# analytic objectives
# ----------------------------------------------------------------------------------
def rosenbrock(w):
    return (1 - w[0]) ** 2 + 100 * (w[1] - w[0] ** 2) ** 2


def analytic_entry(name, model, f, w):
    w = torch.tensor(w)
    val, g = grad_of(f, w)
    H = torch.autograd.functional.hessian(f, w)
    return {
        "name": name,
        "model": model,
        "point": vec(w),
        "value": val,
        "gradient": vec(g),
        "hessian": [vec(r) for r in H],
        "hessianEigenvalues": vec(torch.linalg.eigvalsh(0.5 * (H + H.T))),
    }


def analytic_cases():
    out = []
    for i, pt in enumerate([[1.0, 1.0], [-1.2, 1.0], [0.0, 0.0], [0.5, -0.3], [2.0, 3.5]]):
        out.append(analytic_entry(f"rosenbrock-{i}", {"kind": "rosenbrock", "start": [-1.2, 1.0]}, rosenbrock, pt))
    rng = np.random.default_rng(77)
    for n in (3, 5):
        B = np.round(rng.normal(size=(n, n)), DIGITS)
        A = B @ B.T + 0.5 * np.eye(n)
        A = np.round(0.5 * (A + A.T), DIGITS)
        c = np.round(rng.normal(size=n), DIGITS)
        At, ct = torch.tensor(A), torch.tensor(c)
        f = lambda w, At=At, ct=ct: 0.5 * (w - ct) @ At @ (w - ct)
        model = {"kind": "quadratic", "matrix": A.tolist(), "center": c.tolist(), "start": [1.0] * n}
        for j in range(2):
            pt = np.round(rng.normal(size=n) * 2, DIGITS).tolist()
            out.append(analytic_entry(f"quadratic-{n}-{j}", model, f, pt))
    return out


def main():
    cases = [network_case(i, *c) for i, c in enumerate(CASES)]
    acts = {a for c in CASES for _, a in c[2][:-1]}
    assert acts >= set(ACT), f"activations not covered as hidden: {set(ACT) - acts}"
    doc = {
        "header": {
            "what": "network objective golden values: loss, gradient, Hv, GNv, dense spectra, mini-batches; analytic objectives",
            "reference": "PyTorch autograd, float64",
            "torch": torch.__version__,
            "numpy": np.__version__,
            "python": platform.python_version(),
            "command": "/usr/bin/python3 test/reference/model/make_golden.py",
            "date": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d"),
            "eigenMaxP": EIGEN_MAX_P,
        },
        "cases": cases,
        "analytic": analytic_cases(),
    }
    with open(OUT, "w") as fh:
        json.dump(doc, fh, separators=(",", ":"))
        fh.write("\n")
    print(f"wrote {OUT}: {len(cases)} network cases, {len(doc['analytic'])} analytic, "
          f"{os.path.getsize(OUT) / 1024:.0f} KiB", file=sys.stderr)


if __name__ == "__main__":
    main()
