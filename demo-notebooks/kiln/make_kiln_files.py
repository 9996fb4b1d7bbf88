#!/usr/bin/env python3
"""Writes the kiln demo's files: kiln-firings.csv (invented logged firings of a ceramics kiln:
peak temperature, ramp rate, hold time and room humidity, with the glaze outcome an inspector
recorded) and kiln-start.safetensors (the state_dict of the small torch nn.Sequential a
practitioner would start from). Everything here is an invented scenario.

    bash test/reference/export/make-venv.sh && .venv-torch/bin/python demo-notebooks/kiln/make_kiln_files.py
"""
import csv
import os

import numpy as np
import torch
from safetensors.torch import save_file

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(2026)
rows = []
for _ in range(120):
    peak = rng.normal(1222, 18)          # °C
    ramp = rng.uniform(60, 150)          # °C per hour
    hold = rng.uniform(0, 30)            # minutes at peak
    humid = rng.uniform(25, 80)          # % room humidity
    heat = (peak - 1222) / 18 + 0.04 * hold - 0.012 * (ramp - 100) - 0.01 * (humid - 50) + rng.normal(0, 0.5)
    glaze = "underfired" if heat < -0.8 else "overfired" if heat > 0.9 else "good"
    rows.append([f"{peak:.1f}", f"{ramp:.1f}", f"{hold:.0f}", f"{humid:.0f}", glaze])
with open(os.path.join(HERE, "kiln-firings.csv"), "w", newline="") as fh:
    w = csv.writer(fh)
    w.writerow(["peak_c", "ramp_c_per_h", "hold_min", "humidity_pct", "glaze"])
    w.writerows(rows)

torch.manual_seed(4)
net = torch.nn.Sequential(torch.nn.Linear(4, 12), torch.nn.Tanh(), torch.nn.Linear(12, 3)).double()
save_file({k: v.contiguous() for k, v in net.state_dict().items()}, os.path.join(HERE, "kiln-start.safetensors"))
print("wrote kiln-firings.csv and kiln-start.safetensors")
