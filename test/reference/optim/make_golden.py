#!/usr/bin/python3
"""Golden optimizer trajectories: torch.optim on small full-batch networks and on analytic
objectives (Rosenbrock, a quadratic) in float64, with torch's lr schedulers, parameter groups
for per-layer rates, and gradient clipping.

Reference: PyTorch's torch.optim (run with Debian's /usr/bin/python3). Regenerate from
the repository root with

    /usr/bin/python3 test/reference/optim/make_golden.py

which rewrites test/reference/optim/golden.json next to this script. Networks, data and
initial weights are invented here from fixed numpy seeds; the trajectories torch
produces from them are the expected values.

For every case the file holds the spec (our JSON format, with every optimizer
hyper-parameter spelled out in the recipe so that no default matters), the full-batch
loss before the first step and after each step, the norm of the gradient each step
used and of the update it made, the parameters after step 1 and after the last step,
the learning rate of each update (single parameter group), and for L-BFGS the
accepted step length t and the objective evaluations per step.

Network conventions are those of test/reference/model/make_golden.py (flat vector:
weight [out, in] row-major then bias, per layer; a = W h + b; mean-reduced losses;
l2 = 0.5 * l2 * sum ||W||^2 over weights only). torch's `weight_decay` is applied by
torch to every parameter it is given (weights and biases); torch's loss never
contains it.
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
STEPS = 25

ACT = {
    "linear": lambda a: a,
    "tanh": torch.tanh,
    "sigmoid": torch.sigmoid,
    "softplus": lambda a: F.softplus(a, beta=1.0, threshold=20.0),
    "gelu": lambda a: F.gelu(a, approximate="none"),
    "elu": lambda a: F.elu(a, alpha=1.0),
}

# name -> (seed, inputs, [(units, activation)], loss, l2, rows)
NETS = {
    "tanh-mse": (11, 3, [(6, "tanh"), (2, "linear")], "mse", 0.0, 16),
    "gelu-tanh-ce": (12, 4, [(5, "gelu"), (4, "tanh"), (3, "linear")], "cross-entropy", 0.0, 18),
    "gelu-tanh-ce-l2": (12, 4, [(5, "gelu"), (4, "tanh"), (3, "linear")], "cross-entropy", 0.005, 18),
    "softplus-bce-l2": (13, 3, [(5, "softplus"), (1, "linear")], "binary-cross-entropy", 0.01, 16),
}


def make_net(name):
    seed, inputs, layers, loss, l2, rows = NETS[name]
    rng = np.random.default_rng(seed)
    sizes = [inputs] + [u for u, _ in layers]
    x = np.round(rng.normal(size=(rows, inputs)), DIGITS)
    z = x @ rng.normal(size=(inputs, sizes[-1]))
    if loss == "mse":
        y_np = np.round(np.sin(z) + 0.1 * rng.normal(size=z.shape), DIGITS)
        y_json, y = y_np.tolist(), torch.tensor(y_np)
    elif loss == "cross-entropy":
        cls = np.argmax(z + 0.3 * rng.normal(size=z.shape), axis=1)
        y_json, y = [int(c) for c in cls], torch.tensor(cls, dtype=torch.long)
    else:
        lab = (z + 0.3 * rng.normal(size=z.shape) > 0).astype(np.float64)
        y_json, y = lab.tolist(), torch.tensor(lab)
    weights = []
    for fan_in, fan_out in zip(sizes[:-1], sizes[1:]):
        W = np.round(rng.normal(size=(fan_out, fan_in)) / np.sqrt(fan_in), DIGITS)
        b = np.round(rng.normal(size=fan_out) * 0.2, DIGITS)
        weights.append((W, b))
    return {
        "name": name, "inputs": inputs, "layers": layers, "loss": loss, "l2": l2,
        "x_np": x, "x": torch.tensor(x), "y_json": y_json, "y": y, "weights": weights,
    }


def make_params(net):
    ps = []
    for W, b in net["weights"]:
        ps.append(torch.tensor(W).requires_grad_(True))
        ps.append(torch.tensor(b).requires_grad_(True))
    return ps


def full_loss(net, ps):
    h = net["x"]
    for k, (_, act) in enumerate(net["layers"]):
        W, b = ps[2 * k], ps[2 * k + 1]
        h = ACT[act](h @ W.T + b)
    loss = net["loss"]
    if loss == "mse":
        val = F.mse_loss(h, net["y"])
    elif loss == "cross-entropy":
        val = F.cross_entropy(h, net["y"])
    else:
        val = F.binary_cross_entropy_with_logits(h, net["y"])
    reg = sum((ps[2 * k] ** 2).sum() for k in range(len(net["layers"])))
    return val + 0.5 * net["l2"] * reg


def net_spec(net):
    return {
        "seed": 1,
        "model": {
            "inputs": net["inputs"],
            "layers": [{"units": u, "activation": a} for u, a in net["layers"]],
            "weights": [{"weight": W.tolist(), "bias": b.tolist()} for W, b in net["weights"]],
        },
        "data": {"x": net["x_np"].tolist(), "y": net["y_json"]},
        "loss": net["loss"],
        "regularization": {"l2": net["l2"]},
    }


def quadratic_matrix():
    """A symmetric positive-definite 6 x 6 matrix with eigenvalues 0.5 ... 40 (seeded basis)."""
    rng = np.random.default_rng(21)
    Q, _ = np.linalg.qr(rng.normal(size=(6, 6)))
    A = Q @ np.diag([0.5, 1.0, 2.5, 6.0, 15.0, 40.0]) @ Q.T
    A = np.round(0.5 * (A + A.T), DIGITS)
    c = np.round(rng.normal(size=6), DIGITS)
    start = np.round(c + 2.0 * rng.normal(size=6), DIGITS)
    return A, c, start


def make_problem(name):
    """(spec without recipe, initial parameter tensors, loss of the parameter list)."""
    if name in NETS:
        net = make_net(name)
        return net_spec(net), make_params(net), lambda ps: full_loss(net, ps)
    if name == "rosenbrock":
        start = [-1.2, 1.0]
        f = lambda ps: (1 - ps[0][0]) ** 2 + 100 * (ps[0][1] - ps[0][0] ** 2) ** 2
        return {"seed": 1, "model": {"objective": "rosenbrock", "start": start}}, [torch.tensor(start).requires_grad_(True)], f
    if name == "quadratic-6":
        A, c, start = quadratic_matrix()
        At, ct = torch.tensor(A), torch.tensor(c)
        f = lambda ps: 0.5 * (ps[0] - ct) @ At @ (ps[0] - ct)
        spec = {"seed": 1, "model": {"objective": "quadratic", "matrix": A.tolist(), "center": c.tolist(), "start": start.tolist()}}
        return spec, [torch.tensor(start).requires_grad_(True)], f
    raise ValueError(name)


def flat(ps):
    return torch.cat([p.detach().reshape(-1) for p in ps])


# name -> (net, recipe for our spec, torch optimizer factory)
OPTS = [
    ("sgd", "tanh-mse", {"optimizer": "sgd", "lr": 0.1, "momentum": 0.0, "nesterov": False, "weightDecay": 0.0},
     lambda ps: torch.optim.SGD(ps, lr=0.1)),
    ("sgd-ce", "gelu-tanh-ce", {"optimizer": "sgd", "lr": 0.5, "momentum": 0.0, "nesterov": False, "weightDecay": 0.0},
     lambda ps: torch.optim.SGD(ps, lr=0.5)),
    ("sgd-l2-bce", "softplus-bce-l2", {"optimizer": "sgd", "lr": 0.5, "momentum": 0.0, "nesterov": False, "weightDecay": 0.0},
     lambda ps: torch.optim.SGD(ps, lr=0.5)),
    ("sgd-momentum", "tanh-mse", {"optimizer": "sgd", "lr": 0.02, "momentum": 0.9, "nesterov": False, "weightDecay": 0.0},
     lambda ps: torch.optim.SGD(ps, lr=0.02, momentum=0.9)),
    ("sgd-nesterov", "tanh-mse", {"optimizer": "sgd", "lr": 0.02, "momentum": 0.9, "nesterov": True, "weightDecay": 0.0},
     lambda ps: torch.optim.SGD(ps, lr=0.02, momentum=0.9, nesterov=True)),
    ("sgd-nesterov-ce", "gelu-tanh-ce", {"optimizer": "sgd", "lr": 0.1, "momentum": 0.9, "nesterov": True, "weightDecay": 0.0},
     lambda ps: torch.optim.SGD(ps, lr=0.1, momentum=0.9, nesterov=True)),
    ("sgd-weight-decay", "tanh-mse", {"optimizer": "sgd", "lr": 0.1, "momentum": 0.0, "nesterov": False, "weightDecay": 0.05},
     lambda ps: torch.optim.SGD(ps, lr=0.1, weight_decay=0.05)),
    ("adagrad", "tanh-mse", {"optimizer": "adagrad", "lr": 0.1, "eps": 1e-10, "weightDecay": 0.0},
     lambda ps: torch.optim.Adagrad(ps, lr=0.1, lr_decay=0.0, weight_decay=0.0, initial_accumulator_value=0.0, eps=1e-10)),
    ("rmsprop", "tanh-mse", {"optimizer": "rmsprop", "lr": 0.005, "alpha": 0.99, "eps": 1e-8, "centered": False, "momentum": 0.0, "weightDecay": 0.0},
     lambda ps: torch.optim.RMSprop(ps, lr=0.005, alpha=0.99, eps=1e-8, centered=False, momentum=0.0)),
    ("rmsprop-centered", "gelu-tanh-ce", {"optimizer": "rmsprop", "lr": 0.005, "alpha": 0.9, "eps": 1e-8, "centered": True, "momentum": 0.0, "weightDecay": 0.0},
     lambda ps: torch.optim.RMSprop(ps, lr=0.005, alpha=0.9, eps=1e-8, centered=True, momentum=0.0)),
    ("rmsprop-momentum", "tanh-mse", {"optimizer": "rmsprop", "lr": 0.002, "alpha": 0.99, "eps": 1e-8, "centered": False, "momentum": 0.9, "weightDecay": 0.0},
     lambda ps: torch.optim.RMSprop(ps, lr=0.002, alpha=0.99, eps=1e-8, centered=False, momentum=0.9)),
    ("adam", "tanh-mse", {"optimizer": "adam", "lr": 0.02, "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.0},
     lambda ps: torch.optim.Adam(ps, lr=0.02, betas=(0.9, 0.999), eps=1e-8, amsgrad=False)),
    ("adam-ce", "gelu-tanh-ce", {"optimizer": "adam", "lr": 0.01, "beta1": 0.8, "beta2": 0.99, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.0},
     lambda ps: torch.optim.Adam(ps, lr=0.01, betas=(0.8, 0.99), eps=1e-8, amsgrad=False)),
    # beta2 = 0.95 so that the running maximum of AMSGrad departs from plain Adam within 25 steps
    ("adam-amsgrad", "tanh-mse", {"optimizer": "adam", "lr": 0.02, "beta1": 0.9, "beta2": 0.95, "eps": 1e-8, "amsgrad": True, "weightDecay": 0.0},
     lambda ps: torch.optim.Adam(ps, lr=0.02, betas=(0.9, 0.95), eps=1e-8, amsgrad=True)),
    ("adam-beta2-0.95", "tanh-mse", {"optimizer": "adam", "lr": 0.02, "beta1": 0.9, "beta2": 0.95, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.0},
     lambda ps: torch.optim.Adam(ps, lr=0.02, betas=(0.9, 0.95), eps=1e-8, amsgrad=False)),
    ("adamw", "tanh-mse", {"optimizer": "adamw", "lr": 0.02, "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.01},
     lambda ps: torch.optim.AdamW(ps, lr=0.02, betas=(0.9, 0.999), eps=1e-8, weight_decay=0.01, amsgrad=False)),
    ("adamw-bce-l2", "softplus-bce-l2", {"optimizer": "adamw", "lr": 0.05, "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.1},
     lambda ps: torch.optim.AdamW(ps, lr=0.05, betas=(0.9, 0.999), eps=1e-8, weight_decay=0.1, amsgrad=False)),
    ("adagrad-ce-weight-decay", "gelu-tanh-ce", {"optimizer": "adagrad", "lr": 0.05, "eps": 1e-10, "weightDecay": 0.01},
     lambda ps: torch.optim.Adagrad(ps, lr=0.05, lr_decay=0.0, weight_decay=0.01, initial_accumulator_value=0.0, eps=1e-10)),
    ("rmsprop-centered-momentum-weight-decay", "softplus-bce-l2", {"optimizer": "rmsprop", "lr": 0.002, "alpha": 0.95, "eps": 1e-8, "centered": True, "momentum": 0.5, "weightDecay": 0.02},
     lambda ps: torch.optim.RMSprop(ps, lr=0.002, alpha=0.95, eps=1e-8, centered=True, momentum=0.5, weight_decay=0.02)),
    ("adam-coupled-weight-decay", "tanh-mse", {"optimizer": "adam", "lr": 0.02, "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.05},
     lambda ps: torch.optim.Adam(ps, lr=0.02, betas=(0.9, 0.999), eps=1e-8, weight_decay=0.05, amsgrad=False)),
    ("sgd-nesterov-weight-decay-bce-l2", "softplus-bce-l2", {"optimizer": "sgd", "lr": 0.1, "momentum": 0.8, "nesterov": True, "weightDecay": 0.01},
     lambda ps: torch.optim.SGD(ps, lr=0.1, momentum=0.8, nesterov=True, weight_decay=0.01)),
    ("adamw-amsgrad-ce", "gelu-tanh-ce", {"optimizer": "adamw", "lr": 0.01, "beta1": 0.9, "beta2": 0.95, "eps": 1e-8, "amsgrad": True, "weightDecay": 0.05},
     lambda ps: torch.optim.AdamW(ps, lr=0.01, betas=(0.9, 0.95), eps=1e-8, weight_decay=0.05, amsgrad=True)),
    ("lbfgs-strong-wolfe", "tanh-mse", {"optimizer": "lbfgs", "lr": 1.0, "history": 10, "lineSearch": "strong-wolfe"},
     lambda ps: torch.optim.LBFGS(ps, lr=1.0, max_iter=1, history_size=10, line_search_fn="strong_wolfe")),
    ("lbfgs-strong-wolfe-ce-l2", "gelu-tanh-ce-l2", {"optimizer": "lbfgs", "lr": 1.0, "history": 10, "lineSearch": "strong-wolfe"},
     lambda ps: torch.optim.LBFGS(ps, lr=1.0, max_iter=1, history_size=10, line_search_fn="strong_wolfe")),
    ("lbfgs-strong-wolfe-history3", "softplus-bce-l2", {"optimizer": "lbfgs", "lr": 1.0, "history": 3, "lineSearch": "strong-wolfe"},
     lambda ps: torch.optim.LBFGS(ps, lr=1.0, max_iter=1, history_size=3, line_search_fn="strong_wolfe")),
    ("lbfgs-fixed-step", "tanh-mse", {"optimizer": "lbfgs", "lr": 0.5, "history": 10, "lineSearch": "none"},
     lambda ps: torch.optim.LBFGS(ps, lr=0.5, max_iter=1, history_size=10, line_search_fn=None)),
]


# analytic objectives: name, objective, recipe, torch factory, steps
ANALYTIC = [
    ("rosenbrock-sgd", "rosenbrock", {"optimizer": "sgd", "lr": 0.0005, "momentum": 0.0, "nesterov": False, "weightDecay": 0.0},
     lambda ps: torch.optim.SGD(ps, lr=0.0005), 25),
    ("rosenbrock-sgd-momentum", "rosenbrock", {"optimizer": "sgd", "lr": 0.0002, "momentum": 0.9, "nesterov": False, "weightDecay": 0.0},
     lambda ps: torch.optim.SGD(ps, lr=0.0002, momentum=0.9), 25),
    ("rosenbrock-adam", "rosenbrock", {"optimizer": "adam", "lr": 0.05, "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.0},
     lambda ps: torch.optim.Adam(ps, lr=0.05), 25),
    ("rosenbrock-lbfgs-strong-wolfe", "rosenbrock", {"optimizer": "lbfgs", "lr": 1.0, "history": 10, "lineSearch": "strong-wolfe"},
     lambda ps: torch.optim.LBFGS(ps, lr=1.0, max_iter=1, history_size=10, line_search_fn="strong_wolfe"), 20),
    ("quadratic-6-sgd", "quadratic-6", {"optimizer": "sgd", "lr": 0.045, "momentum": 0.0, "nesterov": False, "weightDecay": 0.0},
     lambda ps: torch.optim.SGD(ps, lr=0.045), 25),
    ("quadratic-6-lbfgs-strong-wolfe", "quadratic-6", {"optimizer": "lbfgs", "lr": 1.0, "history": 10, "lineSearch": "strong-wolfe"},
     lambda ps: torch.optim.LBFGS(ps, lr=1.0, max_iter=1, history_size=10, line_search_fn="strong_wolfe"), 8),
]


# schedules, warm-up, per-layer rates and clipping on the tanh-mse network (4 layers of
# parameter tensors: W0, b0, W1, b1): name, problem, recipe, optimizer, steps, scheduler, clip
def _groups(ps, lr, scales):
    return [{"params": ps[2 * k:2 * k + 2], "lr": lr * s} for k, s in enumerate(scales)]


SCHEDULED = [
    ("sgd-step-schedule", "tanh-mse", {"optimizer": "sgd", "lr": 0.2, "momentum": 0.0, "nesterov": False, "weightDecay": 0.0,
                                       "schedule": {"kind": "step", "every": 5, "factor": 0.5}},
     lambda ps: torch.optim.SGD(ps, lr=0.2), STEPS, lambda o: torch.optim.lr_scheduler.StepLR(o, step_size=5, gamma=0.5), 0.0),
    ("adam-exponential-schedule", "gelu-tanh-ce", {"optimizer": "adam", "lr": 0.03, "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.0,
                                                   "schedule": {"kind": "exponential", "gamma": 0.9}},
     lambda ps: torch.optim.Adam(ps, lr=0.03), STEPS, lambda o: torch.optim.lr_scheduler.ExponentialLR(o, gamma=0.9), 0.0),
    # eta_min = floor * lr; T_max = 30 > 25 steps, so torch's periodic cosine never turns back up
    ("sgd-momentum-cosine-schedule", "tanh-mse", {"optimizer": "sgd", "lr": 0.05, "momentum": 0.9, "nesterov": False, "weightDecay": 0.0,
                                                  "schedule": {"kind": "cosine", "steps": 30, "floor": 0.1}},
     lambda ps: torch.optim.SGD(ps, lr=0.05, momentum=0.9), STEPS, lambda o: torch.optim.lr_scheduler.CosineAnnealingLR(o, T_max=30, eta_min=0.005), 0.0),
    # 1 / (1 + decay * t) through torch's generic LambdaLR
    ("rmsprop-inverse-time-schedule", "tanh-mse", {"optimizer": "rmsprop", "lr": 0.01, "alpha": 0.99, "eps": 1e-8, "centered": False, "weightDecay": 0.0,
                                                   "schedule": {"kind": "inverse-time", "decay": 0.2}},
     lambda ps: torch.optim.RMSprop(ps, lr=0.01, alpha=0.99, eps=1e-8), STEPS, lambda o: torch.optim.lr_scheduler.LambdaLR(o, lambda t: 1.0 / (1.0 + 0.2 * t)), 0.0),
    # warm-up W = 5: torch LinearLR from 1/W over W - 1 updates gives (t + 1)/W, then 1
    ("adam-warmup", "tanh-mse", {"optimizer": "adam", "lr": 0.03, "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.0, "warmup": 5},
     lambda ps: torch.optim.Adam(ps, lr=0.03), STEPS, lambda o: torch.optim.lr_scheduler.LinearLR(o, start_factor=0.2, end_factor=1.0, total_iters=4), 0.0),
    ("sgd-warmup-step-schedule", "gelu-tanh-ce", {"optimizer": "sgd", "lr": 0.5, "momentum": 0.0, "nesterov": False, "weightDecay": 0.0, "warmup": 4,
                                                  "schedule": {"kind": "step", "every": 10, "factor": 0.3}},
     lambda ps: torch.optim.SGD(ps, lr=0.5), STEPS,
     lambda o: torch.optim.lr_scheduler.ChainedScheduler([torch.optim.lr_scheduler.LinearLR(o, start_factor=0.25, end_factor=1.0, total_iters=3),
                                                          torch.optim.lr_scheduler.StepLR(o, step_size=10, gamma=0.3)]), 0.0),
    # per-layer multipliers as torch parameter groups with lr * lrScale
    ("sgd-momentum-layer-scales", "tanh-mse", {"optimizer": "sgd", "lr": 0.05, "momentum": 0.9, "nesterov": False, "weightDecay": 0.0,
                                               "layers": [{"lrScale": 2.0}, {"lrScale": 0.25}]},
     lambda ps: torch.optim.SGD(_groups(ps, 0.05, [2.0, 0.25]), lr=0.05, momentum=0.9), STEPS, None, 0.0),
    ("adamw-layer-scales", "gelu-tanh-ce", {"optimizer": "adamw", "lr": 0.02, "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.05,
                                            "layers": [{"lrScale": 1.5}, {"lrScale": 0.5}, {"lrScale": 0.0}]},
     lambda ps: torch.optim.AdamW(_groups(ps, 0.02, [1.5, 0.5, 0.0]), lr=0.02, weight_decay=0.05), STEPS, None, 0.0),
    # torch.nn.utils.clip_grad_norm_ scales by max/(||g|| + 1e-6); see the test for the tolerance
    ("sgd-clip-norm", "tanh-mse", {"optimizer": "sgd", "lr": 0.3, "momentum": 0.0, "nesterov": False, "weightDecay": 0.0, "clipNorm": 0.3},
     lambda ps: torch.optim.SGD(ps, lr=0.3), STEPS, None, 0.3),
    ("adam-clip-norm", "gelu-tanh-ce", {"optimizer": "adam", "lr": 0.02, "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.0, "clipNorm": 0.3},
     lambda ps: torch.optim.Adam(ps, lr=0.02), STEPS, None, 0.3),
    ("sgd-clip-norm-exact-ratio", "tanh-mse", {"optimizer": "sgd", "lr": 0.3, "momentum": 0.0, "nesterov": False, "weightDecay": 0.0, "clipNorm": 0.3},
     lambda ps: torch.optim.SGD(ps, lr=0.3), STEPS, None, -0.3),
    ("adam-clip-norm-exact-ratio", "gelu-tanh-ce", {"optimizer": "adam", "lr": 0.02, "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.0, "clipNorm": 0.3},
     lambda ps: torch.optim.Adam(ps, lr=0.02), STEPS, None, -0.3),
]


def run_case(name, problem, recipe, factory, steps=STEPS, scheduler=None, clip=0.0):
    """One trajectory. `scheduler(opt)` builds a torch lr scheduler stepped after every update;
    `clip` > 0 applies torch.nn.utils.clip_grad_norm_(max_norm=clip) before every update,
    `clip` < 0 scales the gradient by the exact ratio |clip|/||g|| when ||g|| > |clip|."""
    spec, ps, loss_of = make_problem(problem)
    opt = factory(ps)
    sched = scheduler(opt) if scheduler else None
    is_lbfgs = isinstance(opt, torch.optim.LBFGS)

    def closure():
        opt.zero_grad()
        val = loss_of(ps)
        val.backward()
        return val

    with torch.no_grad():
        initial = float(loss_of(ps))
    losses, grad_norms, update_norms, steps_t, evals, lrs = [], [], [], [], [], []
    after1 = None
    for k in range(steps):
        lrs.append(float(opt.param_groups[0]["lr"]))
        before = flat(ps)
        ps_probe = [p.detach().clone().requires_grad_(True) for p in ps]
        g = torch.autograd.grad(loss_of(ps_probe), ps_probe)
        grad_norms.append(float(torch.cat([t.reshape(-1) for t in g]).norm()))
        if is_lbfgs:
            st = opt.state[opt._params[0]]
            f0 = st.get("func_evals", 0)
            opt.step(closure)
            st = opt.state[opt._params[0]]
            evals.append(int(st["func_evals"] - f0))
            steps_t.append(float(st["t"]))
        else:
            closure()
            if clip > 0:
                torch.nn.utils.clip_grad_norm_(ps, max_norm=clip)
            elif clip < 0:
                # the exact ratio max/||g|| (no +1e-6), written out here with torch tensors
                total = torch.cat([q.grad.reshape(-1) for q in ps]).norm()
                if total > -clip:
                    for q in ps:
                        q.grad.mul_(-clip / total)
            opt.step()
        if sched is not None:
            sched.step()
        after = flat(ps)
        update_norms.append(float((after - before).norm()))
        with torch.no_grad():
            losses.append(float(loss_of(ps)))
        if k == 0:
            after1 = [float(u) for u in after]
    spec = dict(spec, recipe=dict(recipe, batch="full"))
    out = {
        "name": name,
        "network": problem,
        "torch": type(opt).__name__ + repr({k: v for k, v in opt.defaults.items() if k not in ("foreach", "maximize", "differentiable", "capturable", "fused")}),
        "steps": steps,
        "spec": spec,
        "initialLoss": initial,
        "losses": losses,
        "gradNorms": grad_norms,
        "updateNorms": update_norms,
        "paramsAfter1": after1,
        "paramsFinal": [float(u) for u in flat(ps)],
    }
    if len(opt.param_groups) == 1:
        out["lrs"] = lrs
    if sched is not None:
        out["scheduler"] = type(sched).__name__
    if clip != 0:
        out["clipNorm"] = abs(clip)
        out["clipRule"] = "torch.nn.utils.clip_grad_norm_" if clip > 0 else "exact ratio max/||g|| in the script"
    if is_lbfgs:
        out["t"] = steps_t
        out["evaluations"] = evals
    return out


def main():
    cases = [run_case(*c) for c in OPTS] + [run_case(*c) for c in ANALYTIC] + [run_case(*c) for c in SCHEDULED]
    for c in cases:
        if c.get("clipNorm"):
            clipped = sum(g > c["clipNorm"] for g in c["gradNorms"])
            assert 3 <= clipped < c["steps"], f"{c['name']}: {clipped} of {c['steps']} steps clipped"
    for c in cases:
        print(f"{c['name']:32s} {c['initialLoss']:.5f} -> {c['losses'][-1]:.5f}", file=sys.stderr)
        assert np.isfinite(c["losses"]).all() and c["losses"][-1] < c["initialLoss"], c["name"]
        assert min(c["updateNorms"]) > 0, f"{c['name']}: a step made no update"
        # relative comparisons need losses far above round-off
        assert min(c["losses"]) > 1e-6, f"{c['name']}: loss fell to {min(c['losses'])}"
    by_name = {c["name"]: c for c in cases}
    gap = max(abs(a - b) / b for a, b in zip(by_name["adam-amsgrad"]["losses"], by_name["adam-beta2-0.95"]["losses"]))
    assert gap > 1e-3, f"amsgrad indistinguishable from adam ({gap})"
    doc = {
        "header": {
            "what": "torch.optim trajectories on small full-batch float64 networks",
            "reference": "PyTorch torch.optim, float64",
            "torch": torch.__version__,
            "numpy": np.__version__,
            "python": platform.python_version(),
            "command": "/usr/bin/python3 test/reference/optim/make_golden.py",
            "date": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d"),
        },
        "cases": cases,
    }
    with open(OUT, "w") as fh:
        json.dump(doc, fh, separators=(",", ":"))
        fh.write("\n")
    print(f"wrote {OUT}: {len(cases)} trajectories, {os.path.getsize(OUT) / 1024:.0f} KiB", file=sys.stderr)


if __name__ == "__main__":
    main()
