#!/usr/bin/python3
"""Golden values for the strong-Wolfe line search: PyTorch 1.13's torch.optim.lbfgs._strong_wolfe
(the search torch.optim.LBFGS(line_search_fn='strong_wolfe') uses) run in float64 on the
Rosenbrock function along several directions and first trial steps.

Regenerate from the repository root with (Debian's system python, which has torch):

    /usr/bin/python3 test/reference/linesearch/make_wolfe_golden.py

which rewrites test/reference/linesearch/wolfe-golden.json next to this script. Start points,
directions and trial steps are chosen here; torch supplies the accepted steps, values and
evaluation counts.
"""
import json
import os
import platform
import sys

import torch
from torch.optim.lbfgs import _strong_wolfe

torch.set_default_dtype(torch.float64)
HERE = os.path.dirname(os.path.abspath(__file__))


def rosen(x):
    return (1 - x[0]) ** 2 + 100 * (x[1] - x[0] ** 2) ** 2


def value_grad(x):
    x = x.detach().clone().requires_grad_(True)
    f = rosen(x)
    (g,) = torch.autograd.grad(f, x)
    return float(f), g


# (start, direction ('-g' = steepest descent, or explicit), first trial step)
CASES = [
    ([-1.2, 1.0], "-g", 1.0),
    ([-1.2, 1.0], "-g", 1e-3),
    ([-1.2, 1.0], "-g", 1e-5),
    ([0.0, 0.0], "-g", 1.0),
    ([0.0, 0.0], [1.0, 0.0], 1.0),
    ([2.0, 2.0], "-g", 1e-4),
    ([0.5, -0.5], [0.3, 1.0], 10.0),
    ([1.5, 2.0], "-g", 0.01),
]


def main():
    out = {
        "generator": "test/reference/linesearch/make_wolfe_golden.py",
        "command": "/usr/bin/python3 test/reference/linesearch/make_wolfe_golden.py",
        "versions": {"python": platform.python_version(), "torch": torch.__version__},
        "function": "rosenbrock",
        "options": {"c1": 1e-4, "c2": 0.9, "tolerance_change": 1e-9, "max_ls": 25},
        "cases": [],
    }
    for start, direction, t0 in CASES:
        x = torch.tensor(start)
        f, g = value_grad(x)
        d = -g if direction == "-g" else torch.tensor(direction)
        gtd = float(g.dot(d))

        def obj_func(x0, t, dd):
            return value_grad(x0 + t * dd)

        f_new, g_new, t, evals = _strong_wolfe(obj_func, x, t0, d, f, g, torch.tensor(gtd))
        out["cases"].append({
            "start": start, "direction": [float(v) for v in d], "t0": t0, "f0": f, "g0": gtd,
            "step": float(t), "value": float(f_new), "evaluations": int(evals),
        })
    with open(os.path.join(HERE, "wolfe-golden.json"), "w") as fh:
        json.dump(out, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    sys.exit(main())
