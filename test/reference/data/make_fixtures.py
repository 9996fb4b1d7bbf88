#!/usr/bin/env python3
"""Fixtures for the data and weights readers, written by the real libraries.

- .npy: a 3 x 4 matrix (values chosen to be exact in every dtype) in every numeric dtype NumPy
  writes (bool, int8..int64, uint8..uint64, float16/32/64), both byte orders, C and Fortran
  order; a 1-D vector; format versions 2.0 and 3.0 (numpy.lib.format.write_array).
- .npz: numpy.savez and numpy.savez_compressed with arrays x and y.
- .csv: header / no header, quoted fields with delimiters, quotes and line breaks, CRLF, a
  UTF-8 byte-order mark, text class labels, semicolon and tab delimiters, missing values.
- .safetensors: the state_dict of a torch nn.Sequential(Linear, Tanh, Linear, Tanh, Linear)
  saved with safetensors.torch.save_file in float64 and float32.
expected.json holds, per file, what a reader must return (float64 values in C order, computed
here by NumPy / Python's float()).

Run from the repository root with the export venv (it has numpy, torch and safetensors):

    bash test/reference/export/make-venv.sh && .venv-torch/bin/python test/reference/data/make_fixtures.py
"""
import datetime
import io
import json
import os
import platform

import numpy as np
import safetensors
import torch
from safetensors.torch import save_file

HERE = os.path.dirname(os.path.abspath(__file__))
FIX = os.path.join(HERE, "fixtures")
os.makedirs(FIX, exist_ok=True)
expected = {}

base = np.array([[0, 1, 2, 3], [4, 5, 6, 7], [8, 9, 10, 11]], dtype=np.float64)
signed = base - 5  # negative values for signed and float dtypes
DTYPES = ["b1", "i1", "i2", "i4", "i8", "u1", "u2", "u4", "u8", "f2", "f4", "f8"]
for code in DTYPES:
    orders = ["|"] if code in ("b1", "i1", "u1") else ["<", ">"]
    for bo in orders:
        for layout in ("C", "F"):
            src = base if code[0] in "bu" else signed
            if code == "b1":
                src = base % 2
            if code[0] == "f":
                src = signed / 4  # quarters are exact even in float16
            arr = np.array(src, dtype=np.dtype(bo + code) if bo != "|" else np.dtype(code), order=layout)
            name = f"m-{code}-{'le' if bo == '<' else 'be' if bo == '>' else 'na'}-{layout}.npy"
            np.save(os.path.join(FIX, name), arr)
            expected[name] = {"shape": list(arr.shape), "values": arr.astype(np.float64).ravel(order="C").tolist(), "descr": arr.dtype.str}

vec = np.array([0.1, -2.5, 1e-300, 3.0e300, np.pi], dtype="<f8")
np.save(os.path.join(FIX, "vector-f8.npy"), vec)
expected["vector-f8.npy"] = {"shape": [5], "values": vec.tolist(), "descr": "<f8"}
for ver in [(2, 0), (3, 0)]:
    name = f"version-{ver[0]}.npy"
    with open(os.path.join(FIX, name), "wb") as fh:
        np.lib.format.write_array(fh, signed.astype(">f4"), version=ver)
    expected[name] = {"shape": [3, 4], "values": signed.ravel().tolist(), "descr": ">f4"}

x = np.array([[0.5, -1.0], [2.0, 0.25], [1.5, 1.5], [-0.75, 3.0]])
y = np.array([0, 1, 1, 0], dtype=np.int64)
np.savez(os.path.join(FIX, "plain.npz"), x=x, y=y)
np.savez_compressed(os.path.join(FIX, "compressed.npz"), x=x.astype("<f4"), y=y.astype("u1"), other=np.arange(3))
for name in ("plain.npz", "compressed.npz"):
    expected[name] = {"x": {"shape": [4, 2], "values": x.ravel().tolist()}, "y": {"shape": [4], "values": y.astype(np.float64).tolist()}}

# CSV edge cases: (file name, bytes, header?, columns as numbers or text, delimiter)
CSV = {
    "header.csv": b"temp,humidity,label\n21.5,0.40,dry\n23.0,0.55,ok\n19.25,0.80,wet\n22.0,0.61,ok\n",
    "no-header.csv": b"1,2.5,0\n3,-4e-3,1\n5,6.25,1\n",
    "quoted.csv": b'name,value,note\n"a, b",1.5,"said ""hi"""\n"line\nbreak",2.5,plain\n',
    "crlf-bom.csv": b"\xef\xbb\xbftemp,label\r\n1.5,cold\r\n2.5,warm\r\n3.5,warm\r\n",
    "semicolon.csv": b"a;b;c\n1;2;3\n4;5;6\n",
    "tab.tsv": b"a\tb\n1\t2\n3\t4\n",
    "missing-empty.csv": b"a,b,c\n1,2,3\n4,,6\n",
    "missing-na.csv": b"a,b,c\n1,2,3\n4,5,6\n7,NA,9\n",
    "ragged.csv": b"a,b,c\n1,2,3\n4,5\n",
    "text-in-feature.csv": b"a,b,c\n1,2,3\n4,five,6\n",
}
import csv as pycsv
for name, data in CSV.items():
    with open(os.path.join(FIX, name), "wb") as fh:
        fh.write(data)
    text = data.decode("utf-8-sig")
    delim = ";" if name == "semicolon.csv" else "\t" if name.endswith(".tsv") else ","
    rows = list(pycsv.reader(io.StringIO(text, newline=""), delimiter=delim))
    expected[name] = {"rows": rows}

torch.manual_seed(7)
net = torch.nn.Sequential(torch.nn.Linear(3, 5), torch.nn.Tanh(), torch.nn.Linear(5, 4), torch.nn.Tanh(), torch.nn.Linear(4, 2)).double()
sd = {k: v.contiguous() for k, v in net.state_dict().items()}
save_file(sd, os.path.join(FIX, "sequential-f64.safetensors"))
save_file({k: v.float() for k, v in sd.items()}, os.path.join(FIX, "sequential-f32.safetensors"), metadata={"format": "pt"})
for name, conv in (("sequential-f64.safetensors", lambda t: t), ("sequential-f32.safetensors", lambda t: t.float().double())):
    expected[name] = {k: {"shape": list(v.shape), "values": conv(v).reshape(-1).tolist()} for k, v in sd.items()}
np.savez(os.path.join(FIX, "state-dict.npz"), **{k: v.numpy() for k, v in sd.items()})
expected["state-dict.npz"] = expected["sequential-f64.safetensors"]
reg = torch.nn.Sequential(torch.nn.Linear(3, 6), torch.nn.Tanh(), torch.nn.Linear(6, 1)).double()
sd2 = {k: v.contiguous() for k, v in reg.state_dict().items()}
save_file(sd2, os.path.join(FIX, "regressor-f64.safetensors"))
expected["regressor-f64.safetensors"] = {k: {"shape": list(v.shape), "values": v.reshape(-1).tolist()} for k, v in sd2.items()}

expected["header"] = {
    "what": "fixtures for src/core/data readers",
    "numpy": np.__version__, "torch": torch.__version__, "safetensors": safetensors.__version__, "python": platform.python_version(),
    "command": ".venv-torch/bin/python test/reference/data/make_fixtures.py",
    "date": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d"),
}
with open(os.path.join(HERE, "expected.json"), "w") as fh:
    json.dump(expected, fh, indent=0, sort_keys=True)
    fh.write("\n")
print(f"wrote {len(os.listdir(FIX))} fixtures")
