#!/usr/bin/python3
"""Write a striate model-file container with Python's standard library only
(struct, json, hashlib; CPython 3.11, Debian /usr/bin/python3), so that the Go
reader is checked against an independent writer of the documented layout:

    "STRIATEM" | uint32 LE version=1 | uint32 LE header length H | H bytes JSON
    | zero padding to a multiple of 8 | tensors back to back, little-endian
    | SHA-256 of everything before

Run:  /usr/bin/python3 testdata/pipeline/gen_container.py
Writes testdata/pipeline/python_container.bin and python_container.json
(the expected values, for the Go test).
"""
import hashlib, json, os, struct

here = os.path.dirname(os.path.abspath(__file__))

tensors = [
    ("a.weights", "float32", [2, 3], [0.5, -1.25, 3.0, 1e-7, -0.0, 65504.0]),
    ("b.index", "int32", [4], [0, -1, 2147483647, -2147483648]),
]
entries, data, off = [], b"", 0
for name, dt, shape, vals in tensors:
    fmt = "<%d%s" % (len(vals), "f" if dt == "float32" else "i")
    raw = struct.pack(fmt, *vals)
    entries.append({"name": name, "dtype": dt, "shape": shape, "offset": off, "length": len(raw)})
    data += raw
    off += len(raw)
header = json.dumps({
    "format": "striate-model",
    "config": {"note": "written by gen_container.py"},
    "classes": ["shirt", "trouser"],
    "tensors": entries,
}, separators=(",", ":")).encode()
body = b"STRIATEM" + struct.pack("<II", 1, len(header)) + header
body += b"\0" * ((8 - len(body) % 8) % 8)
body += data
body += hashlib.sha256(body).digest()
with open(os.path.join(here, "python_container.bin"), "wb") as f:
    f.write(body)
# float32 values as Python reads them back (rounded to float32).
expect = {"classes": ["shirt", "trouser"], "tensors": []}
for name, dt, shape, vals in tensors:
    fmt = "<%d%s" % (len(vals), "f" if dt == "float32" else "i")
    back = list(struct.unpack(fmt, struct.pack(fmt, *vals)))
    expect["tensors"].append({"name": name, "dtype": dt, "shape": shape, "values": back})
expect["sha256"] = hashlib.sha256(body[:-32]).hexdigest()
with open(os.path.join(here, "python_container.json"), "w") as f:
    json.dump(expect, f, indent=1)
