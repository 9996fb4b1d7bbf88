#!/usr/bin/python3
"""Golden values for the one-dimensional line searches: scipy.optimize.bracket, brent and
golden on published 1-D test functions.

Regenerate from the repository root with (Debian's system python, which has scipy):

    /usr/bin/python3 test/reference/linesearch/make_golden.py

which rewrites test/reference/linesearch/golden.json next to this script.

Test functions (from memory): (x - 1)^2; -x*exp(-x) (minimum at 1); and three problems of
the 1-D global-optimization collection of Hansen, Jaumard & Lu (J. Global Optim. 1992),
each restricted to a bracket around one local minimum: sin(x) + sin(10x/3),
-(16x^2 - 24x + 5) exp(-x), and -(x + sin x) exp(-x^2). The brackets are chosen here; scipy
supplies the expected minimizers.
"""
import json
import math
import os
import platform
import sys

import numpy as np
import scipy
import scipy.optimize as so

HERE = os.path.dirname(os.path.abspath(__file__))

FUNCS = {
    "shifted-square": lambda x: (x - 1.0) ** 2,
    "x-exp": lambda x: -x * math.exp(-x),
    "sin-sin": lambda x: math.sin(x) + math.sin(10.0 * x / 3.0),
    "poly-exp": lambda x: -(16.0 * x * x - 24.0 * x + 5.0) * math.exp(-x),
    "x-sin-gauss": lambda x: -(x + math.sin(x)) * math.exp(-x * x),
}

# name -> three-point bracket (a, b, c) with f(b) below f(a) and f(c), and a start pair for bracket()
CASES = [
    ("shifted-square", (-1.0, 0.5, 2.0), (-1.0, 0.0)),
    ("x-exp", (0.0, 0.5, 3.0), (0.0, 0.5)),
    ("sin-sin", (4.5, 5.2, 6.0), (4.5, 4.8)),
    ("poly-exp", (2.0, 2.5, 3.5), (2.0, 2.2)),
    ("x-sin-gauss", (0.0, 0.5, 1.5), (0.0, 0.1)),
]

TOLS = [1.48e-8, 1e-10]


def main():
    out = {
        "generator": "test/reference/linesearch/make_golden.py",
        "command": "/usr/bin/python3 test/reference/linesearch/make_golden.py",
        "versions": {"python": platform.python_version(), "numpy": np.__version__, "scipy": scipy.__version__},
        "cases": [],
    }
    for name, brack, start in CASES:
        f = FUNCS[name]
        a, b, c = brack
        assert f(b) < f(a) and f(b) < f(c), name
        case = {"name": name, "bracket": list(brack), "start": list(start), "brent": [], "golden": []}
        for tol in TOLS:
            xb, fb, it, nb = so.brent(f, brack=brack, tol=tol, full_output=True)
            case["brent"].append({"tol": tol, "x": float(xb), "f": float(fb), "iterations": int(it), "evaluations": int(nb)})
            xg, fg, ng = so.golden(f, brack=brack, tol=tol, full_output=True)
            case["golden"].append({"tol": tol, "x": float(xg), "f": float(fg), "evaluations": int(ng)})
        xa, xb2, xc, fa, fb2, fc, n = so.bracket(f, xa=start[0], xb=start[1])
        case["scipyBracket"] = {"a": xa, "b": xb2, "c": xc, "fa": fa, "fb": fb2, "fc": fc, "evaluations": n}
        out["cases"].append(case)
    with open(os.path.join(HERE, "golden.json"), "w") as fh:
        json.dump(out, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    sys.exit(main())
