#!/usr/bin/env python3
"""Writes the walk-in cooler demo's files, an invented scenario: a produce wholesaler logs its walk-in
cooler every hour (outside temperature, door openings, pallets of warm produce brought in, the
thermostat's set-point) with the compressor's electric power, and a facilities engineer keeps the
starting weights of a small PyTorch model in a safetensors file so every run starts the same.

    cooler-week1.csv        168 hourly rows: the training data
    cooler-week2.csv        168 hourly rows of the following week: held out
    cooler-start.safetensors  state_dict of nn.Sequential(Linear(4, 16), Tanh(), Linear(16, 1)), float64

    bash test/reference/export/make-venv.sh && .venv-torch/bin/python demo-notebooks/walk-in-cooler/make_cooler_files.py
"""
import csv
import os

import numpy as np
import torch
from safetensors.torch import save_file

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(3107)


def week(start_day):
    rows = []
    for h in range(168):
        hour = h % 24
        day = start_day + h // 24
        outside = 17 + 7 * np.sin((hour - 9) / 24 * 2 * np.pi) + 2 * np.sin(day / 3) + rng.normal(0, 0.8)
        open_hours = 6 <= hour <= 19
        doors = int(rng.poisson(14 if open_hours else 1))
        pallets = int(rng.poisson(5 if 6 <= hour <= 10 else 0.3))
        setpoint = 2.0 if rng.random() < 0.8 else 4.0
        load = 2.1 + 0.28 * max(outside - 4, 0) + 0.09 * doors + 0.55 * pallets - 0.7 * (setpoint - 2)
        power = 11.5 * np.tanh(load / 11.5) + rng.normal(0, 0.25)  # the compressor tops out near 11.5 kW
        rows.append([f"{outside:.1f}", doors, pallets, f"{setpoint:.1f}", f"{power:.2f}"])
    return rows


for name, first_day in (("cooler-week1.csv", 0), ("cooler-week2.csv", 7)):
    with open(os.path.join(HERE, name), "w", newline="") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["outside_c", "door_openings", "pallets_in", "setpoint_c", "compressor_kw"])
        w.writerows(week(first_day))

torch.manual_seed(11)
net = torch.nn.Sequential(torch.nn.Linear(4, 16), torch.nn.Tanh(), torch.nn.Linear(16, 1)).double()
OUT = os.path.join(HERE, "cooler-start.safetensors")
save_file({k: v.contiguous() for k, v in net.state_dict().items()}, OUT)
os.chmod(OUT, 0o644)  # safetensors writes owner-only files
print("wrote cooler-week1.csv, cooler-week2.csv and cooler-start.safetensors")
