"""The benchmark's reference side: PyTorch (and NumPy / SciPy) timing the same work as Stepwell
on the same inputs, one thread, float64. `npm run bench` (test/bench/compare.bench.ts) starts it
and talks to it over stdin/stdout, one JSON object per line, so the two sides take turns
(interleaved) in one run. Nothing here is a typed-in figure: every number is measured now.

Requests (arrays arrive as raw little-endian float64 files the Node side wrote):
  {"cmd": "versions"}
  {"cmd": "mlp", "widths": [...], "act": "tanh", "loss": "mse", "rows": n,
   "x": path, "y": path, "w": path}           the network with Stepwell's parameter layout
  {"cmd": "time", "what": W, "reps": r, ...}     W in grad, hv-fresh, hv-kept, sgd, adam, lanczos
  {"cmd": "matrix", "n": n, "a": path} then {"cmd": "time", "what": "eigvalsh", "reps": r}
Each "time" answers {"wall": [ms...], "cpu": [ms...], "check": {...}}: wall-clock and process
CPU time per repetition, and numbers the Node side compares with its own (the same loss, the
same largest eigenvalue) so a mismatch in the inputs shows instead of a fast wrong figure.
"""
import json
import os
import sys
import time

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("MKL_NUM_THREADS", "1")

import numpy as np  # noqa: E402
import torch  # noqa: E402

try:
    import scipy
    from scipy.sparse.linalg import LinearOperator, eigsh
except ImportError:  # the Lanczos row needs SciPy; the others do not
    scipy = None

torch.set_num_threads(1)
torch.set_num_interop_threads(1)
torch.set_default_dtype(torch.float64)

ACT = {"tanh": torch.nn.Tanh, "relu": torch.nn.ReLU, "sigmoid": torch.nn.Sigmoid}
state = {}


def read(path, count=None):
    a = np.fromfile(path, dtype="<f8")
    return a if count is None else a[:count]


def build(req):
    widths, rows = req["widths"], req["rows"]
    layers = []
    for i in range(len(widths) - 1):
        layers.append(torch.nn.Linear(widths[i], widths[i + 1]))
        if i < len(widths) - 2:
            layers.append(ACT[req["act"]]())
    model = torch.nn.Sequential(*layers)
    w = read(req["w"])
    off = 0
    with torch.no_grad():
        for lin in (m for m in model if isinstance(m, torch.nn.Linear)):
            for p in (lin.weight, lin.bias):  # Stepwell's layout: weight [out, in] row-major, then bias
                k = p.numel()
                p.copy_(torch.from_numpy(w[off:off + k].copy()).view_as(p))
                off += k
    assert off == w.size, f"parameter count {off} != {w.size}"
    x = torch.from_numpy(read(req["x"]).copy()).view(rows, widths[0])
    yv = read(req["y"]).copy()
    if req["loss"] == "cross-entropy":
        y, loss_fn = torch.from_numpy(yv).long(), torch.nn.CrossEntropyLoss()
    else:
        y, loss_fn = torch.from_numpy(yv).view(rows, widths[-1]), torch.nn.MSELoss()
    params = list(model.parameters())
    state.update(model=model, x=x, y=y, loss_fn=loss_fn, params=params, w0=torch.from_numpy(w.copy()))
    state.pop("kept", None)
    return {"parameters": int(sum(p.numel() for p in params))}


def restore():
    """Puts the starting weights back (optimizer steps move them)."""
    off = 0
    with torch.no_grad():
        for p in state["params"]:
            k = p.numel()
            p.copy_(state["w0"][off:off + k].view_as(p))
            off += k


def loss():
    return state["loss_fn"](state["model"](state["x"]), state["y"])


def flat(ts):
    return torch.cat([t.reshape(-1) for t in ts])


def split(v):
    out, off = [], 0
    for p in state["params"]:
        k = p.numel()
        out.append(v[off:off + k].view_as(p))
        off += k
    return out


def hv_fresh(v):
    g = torch.autograd.grad(loss(), state["params"], create_graph=True)
    return flat(torch.autograd.grad(g, state["params"], grad_outputs=split(v)))


def hv_kept(v):
    if "kept" not in state:
        state["kept"] = torch.autograd.grad(loss(), state["params"], create_graph=True)
    return flat(torch.autograd.grad(state["kept"], state["params"], grad_outputs=split(v), retain_graph=True))


def timed(fn, reps):
    wall, cpu = [], []
    for _ in range(reps):
        t, c = time.perf_counter(), time.process_time()
        fn()
        wall.append(1e3 * (time.perf_counter() - t))
        cpu.append(1e3 * (time.process_time() - c))
    return wall, cpu


def run_time(req):
    what, reps = req["what"], req["reps"]
    check = {}
    if what == "eigvalsh":
        a = state["matrix"]
        res = {}
        wall, cpu = timed(lambda: res.update(v=np.linalg.eigvalsh(a)), reps)
        check = {"max": float(res["v"][-1]), "min": float(res["v"][0])}
        return {"wall": wall, "cpu": cpu, "check": check}
    model, params = state["model"], state["params"]
    restore()
    if what == "grad":
        def step():
            model.zero_grad(set_to_none=True)
            value = loss()
            value.backward()
            check["loss"] = float(value.detach())
        wall, cpu = timed(step, reps)
    elif what in ("hv-fresh", "hv-kept"):
        v = torch.from_numpy(read(req["v"]).copy())
        fn = hv_fresh if what == "hv-fresh" else hv_kept
        state.pop("kept", None)
        if what == "hv-kept":
            hv_kept(v)  # the kept graph is built once, outside the timed products
        out = {}
        wall, cpu = timed(lambda: out.update(hv=fn(v)), reps)
        check["hvNorm"] = float(out["hv"].norm())
    elif what in ("sgd", "adam"):
        opt = torch.optim.SGD(params, lr=req["lr"]) if what == "sgd" else torch.optim.Adam(params, lr=req["lr"])
        first = []

        def step():
            opt.zero_grad(set_to_none=True)
            value = loss()
            value.backward()
            opt.step()
            first.append(float(value.detach()))
        wall, cpu = timed(step, reps)
        check["firstLoss"] = first[0]
        restore()
    elif what == "lanczos":
        if scipy is None:
            return {"error": "SciPy is not installed for this interpreter"}
        p = sum(q.numel() for q in params)
        count = [0]

        def matvec(x):
            count[0] += 1
            return hv_kept(torch.from_numpy(np.ascontiguousarray(x, dtype=np.float64).reshape(-1))).numpy()
        v0 = read(req["v0"])
        res = {}

        def solve():
            state.pop("kept", None)
            count[0] = 0
            op = LinearOperator((p, p), matvec=matvec, dtype=np.float64)
            res["values"] = eigsh(op, k=req["k"], which="LA", tol=req["tol"], v0=v0, return_eigenvectors=False)
        wall, cpu = timed(solve, reps)
        check = {"lambdaMax": float(np.max(res["values"])), "products": count[0]}
    else:
        return {"error": f"unknown measurement {what}"}
    return {"wall": wall, "cpu": cpu, "check": check}


def handle(req):
    cmd = req["cmd"]
    if cmd == "versions":
        return {"python": sys.version.split()[0], "torch": torch.__version__, "numpy": np.__version__,
                "scipy": None if scipy is None else scipy.__version__, "interpreter": sys.executable}
    if cmd == "mlp":
        return build(req)
    if cmd == "matrix":
        n = req["n"]
        state["matrix"] = read(req["a"]).reshape(n, n).copy()
        return {"n": n}
    if cmd == "time":
        return run_time(req)
    return {"error": f"unknown command {cmd}"}


for line in sys.stdin:
    if not line.strip():
        continue
    try:
        reply = handle(json.loads(line))
    except Exception as e:  # report, keep serving
        reply = {"error": f"{type(e).__name__}: {e}"}
    sys.stdout.write(json.dumps(reply) + "\n")
    sys.stdout.flush()
