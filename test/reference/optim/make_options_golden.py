#!/usr/bin/env python3
"""Golden trajectories for the recipe options and schedules that mirror PyTorch's: SGD dampening,
Adagrad lr_decay and initial_accumulator_value, L-BFGS max_iter / max_eval / tolerance_grad /
tolerance_change, clip_grad_value_ (alone and before clip_grad_norm_), weight decay without
biases (parameter groups), softplus beta/threshold, leaky-relu slope, elu alpha, and the
schedulers MultiStepLR, ConstantLR, PolynomialLR, CosineAnnealingWarmRestarts, OneCycleLR,
ReduceLROnPlateau (stepped with the full-batch loss after each update), SequentialLR, and a
cosine held at its floor past T_max (SequentialLR of CosineAnnealingLR and ConstantLR).

Reference: PyTorch's torch.optim and torch.optim.lr_scheduler, PyPI torch 2.13.0 (CPU) from the
export venv — torch >= 2.0 budgets each L-BFGS line search as max_eval minus the evaluations
already made (1.13 always allowed 25), and the multi-iteration L-BFGS cases follow the current
rule. Regenerate from the repository root with

    bash test/reference/export/make-venv.sh
    .venv-torch/bin/python test/reference/optim/make_options_golden.py

which rewrites test/reference/optim/options-golden.json. Networks, data and weights come from
make_golden.py (fixed numpy seeds); the trajectories torch produces are the expected values.
"""
import datetime
import json
import os
import platform
import sys

import numpy as np
import torch
import torch.nn.functional as F

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import make_golden as base  # noqa: E402

torch.set_num_threads(1)
torch.set_default_dtype(torch.float64)

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "options-golden.json")
STEPS = 25
S = torch.optim.lr_scheduler

# parametrized activations: name used here -> (torch function, our spec fields)
PARAM_ACT = {
    "softplus-b2": (lambda a: F.softplus(a, beta=2.0, threshold=1.5), {"activation": "softplus", "beta": 2.0, "threshold": 1.5}),
    "leaky-0.2": (lambda a: F.leaky_relu(a, negative_slope=0.2), {"activation": "leaky-relu", "slope": 0.2}),
    "elu-0.5": (lambda a: F.elu(a, alpha=0.5), {"activation": "elu", "alpha": 0.5}),
}
for k, (f, _) in PARAM_ACT.items():
    base.ACT[k] = f
base.NETS["softplus-b2-mse"] = (31, 3, [(6, "softplus-b2"), (2, "linear")], "mse", 0.0, 16)
base.NETS["leaky-elu-ce"] = (32, 4, [(6, "leaky-0.2"), (5, "elu-0.5"), (3, "linear")], "cross-entropy", 0.0, 18)


def problem(name):
    spec, ps, loss_of = base.make_problem(name)
    for layer in spec["model"].get("layers", []):
        if layer["activation"] in PARAM_ACT:
            layer.update(PARAM_ACT[layer["activation"]][1])
    return spec, ps, loss_of


def groups(ps, lr, scales=None, decay=0.0, decay_biases=True):
    """Parameter groups per tensor: lr·scale of its layer, weight_decay 0 on biases if asked."""
    out = []
    for i, p in enumerate(ps):
        layer, is_bias = i // 2, i % 2 == 1
        s = 1.0 if scales is None else scales[layer]
        out.append({"params": [p], "lr": lr * s, "weight_decay": 0.0 if (is_bias and not decay_biases) else decay})
    return out


def run(name, prob, recipe, make_opt, make_sched=None, plateau=False, clip_value=0.0, clip_norm=0.0, steps=STEPS, extra=None):
    spec, ps, loss_of = problem(prob)
    opt = make_opt(ps)
    sched = make_sched(opt) if make_sched else None
    warm = None
    if isinstance(sched, tuple):  # (warm-up, plateau) stepped one after the other
        warm, sched = sched
    is_lbfgs = isinstance(opt, torch.optim.LBFGS)

    def closure():
        opt.zero_grad()
        val = loss_of(ps)
        val.backward()
        return val

    with torch.no_grad():
        initial = float(loss_of(ps))
    losses, lrs, evals, t_end = [], [], [], []
    after1 = None
    for k in range(steps):
        lrs.append([float(g["lr"]) for g in opt.param_groups])
        if is_lbfgs:
            st = opt.state[opt._params[0]]
            f0 = st.get("func_evals", 0)
            opt.step(closure)
            st = opt.state[opt._params[0]]
            evals.append(int(st["func_evals"] - f0))
        else:
            closure()
            if clip_value > 0:
                torch.nn.utils.clip_grad_value_(ps, clip_value)
            if clip_norm > 0:
                torch.nn.utils.clip_grad_norm_(ps, max_norm=clip_norm)
            opt.step()
        with torch.no_grad():
            loss = float(loss_of(ps))
        losses.append(loss)
        if warm is not None:
            warm.step()
        if sched is not None:
            sched.step(loss) if plateau else sched.step()
        if k == 0:
            after1 = [float(u) for u in base.flat(ps)]
    out = {
        "name": name, "network": prob, "torch": type(opt).__name__, "steps": steps,
        "spec": dict(spec, recipe=dict(recipe, batch="full")),
        "initialLoss": initial, "losses": losses,
        "lrs": [g[0] for g in lrs] if all(len(g) == 1 for g in lrs) or all(len(set(g)) == 1 for g in lrs) else None,
        "paramsAfter1": after1, "paramsFinal": [float(u) for u in base.flat(ps)],
    }
    if sched is not None:
        out["scheduler"] = type(sched).__name__ if warm is None else f"{type(warm).__name__}+{type(sched).__name__}"
    if is_lbfgs:
        out["evaluations"] = evals
    if extra:
        out.update(extra)
    return out


SGD = {"optimizer": "sgd", "momentum": 0.0, "nesterov": False, "weightDecay": 0.0}
ADAM = {"optimizer": "adam", "beta1": 0.9, "beta2": 0.999, "eps": 1e-8, "amsgrad": False, "weightDecay": 0.0}


def cases():
    c = []
    # --- optimizer options
    c.append(run("sgd-dampening", "tanh-mse", dict(SGD, lr=0.02, momentum=0.9, dampening=0.3),
                 lambda ps: torch.optim.SGD(ps, lr=0.02, momentum=0.9, dampening=0.3)))
    c.append(run("adagrad-lr-decay-accumulator", "gelu-tanh-ce", {"optimizer": "adagrad", "lr": 0.1, "eps": 1e-10, "weightDecay": 0.0, "lrDecay": 0.05, "initialAccumulator": 0.1},
                 lambda ps: torch.optim.Adagrad(ps, lr=0.1, lr_decay=0.05, initial_accumulator_value=0.1, eps=1e-10)))
    lb = {"optimizer": "lbfgs", "lr": 1.0, "history": 10, "lineSearch": "strong-wolfe"}
    c.append(run("lbfgs-max-iter-5", "tanh-mse", dict(lb, maxIter=5),
                 lambda ps: torch.optim.LBFGS(ps, lr=1.0, max_iter=5, history_size=10, line_search_fn="strong_wolfe"), steps=8))
    c.append(run("lbfgs-max-iter-20-max-eval-12", "softplus-bce-l2", dict(lb, maxIter=20, maxEval=12, history=5),
                 lambda ps: torch.optim.LBFGS(ps, lr=1.0, max_iter=20, max_eval=12, history_size=5, line_search_fn="strong_wolfe"), steps=6))
    c.append(run("lbfgs-tolerances", "gelu-tanh-ce-l2", dict(lb, maxIter=10, toleranceGrad=1e-3, toleranceChange=1e-4),
                 lambda ps: torch.optim.LBFGS(ps, lr=1.0, max_iter=10, tolerance_grad=1e-3, tolerance_change=1e-4, history_size=10, line_search_fn="strong_wolfe"), steps=6))
    c.append(run("lbfgs-max-iter-3-fixed-step", "tanh-mse", {"optimizer": "lbfgs", "lr": 0.5, "history": 10, "lineSearch": "none", "maxIter": 3},
                 lambda ps: torch.optim.LBFGS(ps, lr=0.5, max_iter=3, history_size=10, line_search_fn=None), steps=8))
    # --- gradient transforms and parameter groups
    c.append(run("sgd-clip-value", "tanh-mse", dict(SGD, lr=0.3, clipValue=0.05), lambda ps: torch.optim.SGD(ps, lr=0.3), clip_value=0.05))
    c.append(run("adam-clip-value-then-norm", "gelu-tanh-ce", dict(ADAM, lr=0.02, clipValue=0.1, clipNorm=0.2),
                 lambda ps: torch.optim.Adam(ps, lr=0.02), clip_value=0.1, clip_norm=0.2))
    c.append(run("sgd-momentum-decay-weights-only", "tanh-mse", dict(SGD, lr=0.05, momentum=0.9, weightDecay=0.05, decayBiases=False),
                 lambda ps: torch.optim.SGD(groups(ps, 0.05, decay=0.05, decay_biases=False), lr=0.05, momentum=0.9)))
    c.append(run("adamw-decay-weights-only-layer-scales", "gelu-tanh-ce", dict(ADAM, optimizer="adamw", lr=0.02, weightDecay=0.1, decayBiases=False, layers=[{"lrScale": 1.5}, {"lrScale": 1.0}, {"lrScale": 0.5}]),
                 lambda ps: torch.optim.AdamW(groups(ps, 0.02, [1.5, 1.0, 0.5], decay=0.1, decay_biases=False), lr=0.02)))
    # --- parametrized activations
    c.append(run("sgd-softplus-beta-threshold", "softplus-b2-mse", dict(SGD, lr=0.1), lambda ps: torch.optim.SGD(ps, lr=0.1)))
    c.append(run("adam-leaky-slope-elu-alpha", "leaky-elu-ce", dict(ADAM, lr=0.01), lambda ps: torch.optim.Adam(ps, lr=0.01)))
    # --- schedules
    c.append(run("sgd-multistep", "tanh-mse", dict(SGD, lr=0.2, schedule={"kind": "multistep", "milestones": [3, 8, 15], "factor": 0.5}),
                 lambda ps: torch.optim.SGD(ps, lr=0.2), lambda o: S.MultiStepLR(o, milestones=[3, 8, 15], gamma=0.5)))
    c.append(run("adam-factor", "gelu-tanh-ce", dict(ADAM, lr=0.03, schedule={"kind": "factor", "factor": 0.25, "steps": 6}),
                 lambda ps: torch.optim.Adam(ps, lr=0.03), lambda o: S.ConstantLR(o, factor=0.25, total_iters=6)))
    c.append(run("sgd-polynomial-2", "tanh-mse", dict(SGD, lr=0.2, momentum=0.5, schedule={"kind": "polynomial", "steps": 20, "power": 2}),
                 lambda ps: torch.optim.SGD(ps, lr=0.2, momentum=0.5), lambda o: S.PolynomialLR(o, total_iters=20, power=2.0)))
    c.append(run("adam-polynomial-half", "tanh-mse", dict(ADAM, lr=0.03, schedule={"kind": "polynomial", "steps": 30, "power": 0.5}),
                 lambda ps: torch.optim.Adam(ps, lr=0.03), lambda o: S.PolynomialLR(o, total_iters=30, power=0.5)))
    c.append(run("sgd-restarts-growth-2", "tanh-mse", dict(SGD, lr=0.2, schedule={"kind": "restarts", "period": 4, "growth": 2, "floor": 0.1}),
                 lambda ps: torch.optim.SGD(ps, lr=0.2), lambda o: S.CosineAnnealingWarmRestarts(o, T_0=4, T_mult=2, eta_min=0.02)))
    c.append(run("adam-restarts", "gelu-tanh-ce", dict(ADAM, lr=0.03, schedule={"kind": "restarts", "period": 7}),
                 lambda ps: torch.optim.Adam(ps, lr=0.03), lambda o: S.CosineAnnealingWarmRestarts(o, T_0=7)))
    c.append(run("sgd-onecycle-cos", "tanh-mse", dict(SGD, lr=0.3, schedule={"kind": "onecycle", "steps": 25}),
                 lambda ps: torch.optim.SGD(ps, lr=0.3), lambda o: S.OneCycleLR(o, max_lr=0.3, total_steps=25, cycle_momentum=False)))
    c.append(run("adam-onecycle-linear-three-phase", "gelu-tanh-ce", dict(ADAM, lr=0.05, schedule={"kind": "onecycle", "steps": 25, "peak": 0.25, "anneal": "linear", "divisor": 10, "finalDivisor": 100, "threePhase": True}),
                 lambda ps: torch.optim.Adam(ps, lr=0.05), lambda o: S.OneCycleLR(o, max_lr=0.05, total_steps=25, pct_start=0.25, anneal_strategy="linear", div_factor=10, final_div_factor=100, three_phase=True, cycle_momentum=False)))
    c.append(run("sgd-onecycle-layer-scales", "tanh-mse", dict(SGD, lr=0.3, momentum=0.8, schedule={"kind": "onecycle", "steps": 25, "peak": 0.4}, layers=[{"lrScale": 0.5}, {"lrScale": 2.0}]),
                 lambda ps: torch.optim.SGD(groups(ps, 0.3, [0.5, 2.0]), lr=0.3, momentum=0.8),
                 lambda o: S.OneCycleLR(o, max_lr=[0.15, 0.15, 0.6, 0.6], total_steps=25, pct_start=0.4, cycle_momentum=False)))
    c.append(run("sgd-plateau", "tanh-mse", dict(SGD, lr=0.3, momentum=0.9, schedule={"kind": "plateau", "factor": 0.5, "patience": 1, "threshold": 0.02, "floor": 0.2}),
                 lambda ps: torch.optim.SGD(ps, lr=0.3, momentum=0.9), lambda o: S.ReduceLROnPlateau(o, factor=0.5, patience=1, threshold=0.02, min_lr=0.06, eps=0.0), plateau=True))
    c.append(run("adam-plateau-abs-cooldown-warmup", "gelu-tanh-ce", dict(ADAM, lr=0.05, warmup=3, schedule={"kind": "plateau", "factor": 0.3, "patience": 0, "threshold": 0.01, "thresholdMode": "abs", "cooldown": 2}),
                 lambda ps: torch.optim.Adam(ps, lr=0.05),
                 lambda o: (S.LinearLR(o, start_factor=1 / 3, end_factor=1.0, total_iters=2), S.ReduceLROnPlateau(o, factor=0.3, patience=0, threshold=0.01, threshold_mode="abs", cooldown=2, eps=0.0)), plateau=True))
    c.append(run("sgd-sequence-linear-exponential", "tanh-mse", dict(SGD, lr=0.2, schedule={"kind": "sequence", "phases": [{"kind": "factor", "factor": 0.2, "steps": 4}, {"kind": "exponential", "gamma": 0.9}], "milestones": [5]}),
                 lambda ps: torch.optim.SGD(ps, lr=0.2),
                 lambda o: S.SequentialLR(o, [S.ConstantLR(o, factor=0.2, total_iters=4), S.ExponentialLR(o, gamma=0.9)], milestones=[5])))
    c.append(run("adam-sequence-three", "gelu-tanh-ce", dict(ADAM, lr=0.03, schedule={"kind": "sequence", "phases": [{"kind": "step", "every": 2, "factor": 0.5}, {"kind": "cosine", "steps": 10, "floor": 0.1}, {"kind": "multistep", "milestones": [2, 4], "factor": 0.5}], "milestones": [6, 16]}),
                 lambda ps: torch.optim.Adam(ps, lr=0.03),
                 lambda o: S.SequentialLR(o, [S.StepLR(o, step_size=2, gamma=0.5), S.CosineAnnealingLR(o, T_max=10, eta_min=0.003), S.MultiStepLR(o, milestones=[2, 4], gamma=0.5)], milestones=[6, 16])))
    # cosine held at its floor after `steps` (torch's cosine would rise again): what export writes
    c.append(run("sgd-cosine-held-past-steps", "tanh-mse", dict(SGD, lr=0.1, momentum=0.9, schedule={"kind": "cosine", "steps": 12, "floor": 0.2}),
                 lambda ps: torch.optim.SGD(ps, lr=0.1, momentum=0.9),
                 lambda o: S.SequentialLR(o, [S.CosineAnnealingLR(o, T_max=12, eta_min=0.02), S.ConstantLR(o, factor=0.2, total_iters=10**9)], milestones=[12])))
    return c


def main():
    import warnings
    warnings.filterwarnings("ignore")  # SequentialLR's step(0) deprecation notice
    cs = cases()
    for c in cs:
        print(f"{c['name']:40s} {c['initialLoss']:.5f} -> {c['losses'][-1]:.5f}", file=sys.stderr)
        assert np.isfinite(c["losses"]).all() and c["losses"][-1] < c["initialLoss"], c["name"]
        assert min(c["losses"]) > 1e-6, c["name"]
    by = {c["name"]: c for c in cs}
    # the cases must exercise what they name
    assert sum(1 for a, b in zip(by["sgd-plateau"]["lrs"], by["sgd-plateau"]["lrs"][1:]) if b < a) >= 2, "plateau never reduced twice"
    assert min(by["sgd-plateau"]["lrs"]) == 0.06, "plateau never reached its floor"
    assert max(len(set(e for e in by[n]["evaluations"])) for n in ["lbfgs-max-iter-5"]) >= 1
    assert any(e > 3 for e in by["lbfgs-max-iter-5"]["evaluations"]), "max_iter 5 never iterated"
    doc = {
        "header": {
            "what": "torch.optim options and lr_scheduler trajectories on small full-batch float64 networks",
            "reference": "PyTorch torch.optim and torch.optim.lr_scheduler, float64",
            "torch": torch.__version__, "numpy": np.__version__, "python": platform.python_version(),
            "command": ".venv-torch/bin/python test/reference/optim/make_options_golden.py",
            "date": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d"),
        },
        "cases": cs,
    }
    with open(OUT, "w") as fh:
        json.dump(doc, fh, separators=(",", ":"))
        fh.write("\n")
    print(f"wrote {OUT}: {len(cs)} trajectories, {os.path.getsize(OUT) / 1024:.0f} KiB", file=sys.stderr)


if __name__ == "__main__":
    main()
