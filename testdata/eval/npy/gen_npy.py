#!/usr/bin/python3
"""NPY v1.0 files written by NumPy, for the byte-for-byte test of striate's writer.

Run: /usr/bin/python3 testdata/eval/npy/gen_npy.py   (NumPy 1.24.2, Debian bookworm python3-numpy)
"""
import os

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
f = (np.arange(12, dtype=np.float32).reshape(3, 4) * np.float32(0.5) - np.float32(1)) / np.float32(3)
np.save(os.path.join(HERE, "float32_3x4.npy"), f)
np.save(os.path.join(HERE, "int32_5.npy"), np.array([0, 1, 2, 9, -7], dtype=np.int32))
np.save(os.path.join(HERE, "float32_0x7.npy"), np.zeros((0, 7), dtype=np.float32))
# A long shape, so the header needs more than one 64-byte block.
np.save(os.path.join(HERE, "float32_1x1x1x1x1x1x1x1x1x1x1x1x2.npy"), np.array([1.5, -2.25], dtype=np.float32).reshape((1,) * 12 + (2,)))
print("numpy", np.__version__)
