#!/usr/bin/env python3
"""Writes taken-x.npy and taken-y.npy with numpy.save: the bytes Stepwell's "Take Data from the
Kernel" must produce for the same float64 arrays when the user saves them as .npy files
(test/unit/experiment/take-files.test.ts compares byte for byte).

    /usr/bin/python3 test/reference/take/make_taken_npy.py   # numpy 1.24.2 (Debian 12)
"""
import os

import numpy as np

OUT = os.path.dirname(os.path.abspath(__file__))
np.save(os.path.join(OUT, "taken-x.npy"), np.array([[0.1, -2.0], [3e-310, 7.0], [1.5, -0.0]], dtype="<f8"))
np.save(os.path.join(OUT, "taken-y.npy"), np.array([0.25, -1.0, 1e300], dtype="<f8"))
print("wrote taken-x.npy and taken-y.npy with numpy", np.__version__)
