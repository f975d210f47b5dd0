#!/usr/bin/python3
"""Write small IDX files with NumPy, independently of striate's writer.

They seed FuzzIDX and let the Go reader be checked against a second
implementation of the format (big-endian header: 00 00 <type> <rank>, then
rank big-endian uint32 dimensions, then big-endian elements).

Library: NumPy (Debian python3-numpy 1.24.2), gzip from the Python standard
library. Run from the repository root:  /usr/bin/python3 testdata/datasets/gen_idx.py
Outputs: testdata/datasets/idx/*.idx, *.idx.gz and idx/expected.json.
"""
import gzip, json, os
import numpy as np

out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "idx")
os.makedirs(out, exist_ok=True)

TYPES = {0x08: ">u1", 0x09: ">i1", 0x0B: ">i2", 0x0C: ">i4", 0x0D: ">f4", 0x0E: ">f8"}

def idx_bytes(a, code):
    hdr = bytes([0, 0, code, a.ndim]) + b"".join(int(d).to_bytes(4, "big") for d in a.shape)
    return hdr + a.astype(TYPES[code]).tobytes()

rng = np.random.RandomState(20260101)
arrays = {
    "images_u8": (rng.randint(0, 256, size=(3, 4, 5)), 0x08),
    "labels_u8": (np.array([2, 0, 1]), 0x08),
    "i8": (np.array([[-128, -1, 0], [1, 2, 127]]), 0x09),
    "i16": (np.array([-32768, -2, 0, 3, 32767]), 0x0B),
    "i32": (np.array([[-2147483648, 7], [0, 2147483647]]), 0x0C),
    "f32": (np.array([0.5, -1.25, 3.0e-8, 65504.0], dtype=np.float32), 0x0D),
    "f64": (np.array([[np.pi, -np.e], [1e-300, 1e300]]), 0x0E),
}
expected = {}
for name, (a, code) in arrays.items():
    b = idx_bytes(a, code)
    with open(os.path.join(out, name + ".idx"), "wb") as f:
        f.write(b)
    expected[name] = {"type": code, "dims": list(a.shape),
                      "values": [float(v) for v in a.astype(TYPES[code]).astype(np.float64).ravel()]}
# One gzip-compressed copy of the image file.
with open(os.path.join(out, "images_u8.idx.gz"), "wb") as f:
    f.write(gzip.compress(idx_bytes(*arrays["images_u8"]), compresslevel=9, mtime=0))
with open(os.path.join(out, "expected.json"), "w") as f:
    json.dump({"generator": "testdata/datasets/gen_idx.py, NumPy 1.24.2 (Debian python3-numpy)",
               "arrays": expected}, f, indent=1)
