#!/usr/bin/python3
"""NPY files written by NumPy, for the tests of datasets' NPY reader and writer.

The files of format version 1.0 check striate's writer byte for byte; the others check that the reader accepts
what NumPy writes (versions 2.0 and 3.0, a 0-d array) and rejects, with a typed error, what it does not read
(Fortran order, float64, big-endian).

Run: /usr/bin/python3 testdata/datasets/npy/gen_npy.py   (NumPy 1.24.2, Debian bookworm python3-numpy)
"""
import os

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))


def path(name):
    return os.path.join(HERE, name)


f = (np.arange(12, dtype=np.float32).reshape(3, 4) * np.float32(0.5) - np.float32(1)) / np.float32(3)
np.save(path("float32_3x4.npy"), f)
np.save(path("int32_5.npy"), np.array([0, 1, 2, 9, -7], dtype=np.int32))
np.save(path("float32_0x7.npy"), np.zeros((0, 7), dtype=np.float32))
# A long shape, so the header needs more than one 64-byte block.
np.save(path("float32_1x1x1x1x1x1x1x1x1x1x1x1x2.npy"), np.array([1.5, -2.25], dtype=np.float32).reshape((1,) * 12 + (2,)))
# Read-only cases: the same 3×4 array in format versions 2.0 and 3.0, and a 0-d array.
for version in [(2, 0), (3, 0)]:
    with open(path("float32_3x4_v%d.npy" % version[0]), "wb") as fh:
        np.lib.format.write_array(fh, f, version=version)
np.save(path("float32_scalar.npy"), np.float32(-0.125))
# Rejected cases: Fortran order, float64, big-endian float32.
np.save(path("reject_fortran.npy"), np.asfortranarray(f))
np.save(path("reject_float64.npy"), f.astype(np.float64))
np.save(path("reject_bigendian.npy"), f.astype(">f4"))
print("numpy", np.__version__)
