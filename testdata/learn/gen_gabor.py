#!/usr/bin/python3
"""Reference Gabor kernels for learn's Gabor-fit tests.

Generated with Debian's scikit-image 0.19.3 (skimage.filters.gabor_kernel) and
NumPy 1.24.2 via /usr/bin/python3:  /usr/bin/python3 gen_gabor.py

gabor_kernel(frequency, theta, bandwidth, sigma_x, sigma_y, offset) returns
  exp(-0.5*(x'^2/sx^2 + y'^2/sy^2)) / (2 pi sx sy) * exp(i (2 pi f x' + offset)),
  x' = x cos(theta) + y sin(theta), y' = -x sin(theta) + y cos(theta),
with x the column and y the row offset (row index grows DOWN). When only
`bandwidth` b (octaves) is given, sx = sy = sqrt(ln2/2)/pi * (2^b+1)/(2^b-1) / f,
which is skimage's own octave-bandwidth relation: a check of ours.
The real part is stored, cropped or zero-padded to 17x17 around the centre.
"""
import json
import numpy as np
import skimage
from skimage.filters import gabor_kernel

S = 17
cases = [
    dict(frequency=0.15, theta=0.0, bandwidth=1.0, offset=0.0),
    dict(frequency=0.2, theta=np.pi / 4, bandwidth=1.5, offset=np.pi / 2),
    dict(frequency=0.12, theta=2.0, bandwidth=1.2, offset=1.0),
    dict(frequency=0.25, theta=np.pi / 3, sigma_x=2.0, sigma_y=3.5, offset=0.3),
    dict(frequency=0.18, theta=2.6, sigma_x=1.8, sigma_y=2.8, offset=-1.2),
]
out = []
for c in cases:
    k = np.real(gabor_kernel(**c))
    h, w = k.shape
    full = np.zeros((max(h, S), max(w, S)))
    oy, ox = (full.shape[0] - h) // 2, (full.shape[1] - w) // 2
    full[oy:oy + h, ox:ox + w] = k
    cy, cx = full.shape[0] // 2, full.shape[1] // 2
    crop = full[cy - S // 2:cy + S // 2 + 1, cx - S // 2:cx + S // 2 + 1]
    if "bandwidth" in c:
        b = c["bandwidth"]
        sig = np.sqrt(np.log(2) / 2) / np.pi * (2 ** b + 1) / (2 ** b - 1) / c["frequency"]
        sx = sy = sig
    else:
        sx, sy = c["sigma_x"], c["sigma_y"]
    rec = {k2: float(v) for k2, v in c.items()}
    rec.update(sigma_x=float(sx), sigma_y=float(sy), size=S, kernel=crop.ravel().tolist())
    out.append(rec)
with open("gabor_ref.json", "w") as fh:
    json.dump({"generator": "gen_gabor.py", "library": "scikit-image %s, numpy %s" % (skimage.__version__, np.__version__),
               "cases": out}, fh)
print("wrote", len(out), "kernels")
