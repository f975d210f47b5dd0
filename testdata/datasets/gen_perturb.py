#!/usr/bin/python3
"""Reference outputs for striate's geometric and blur perturbations.

Library: SciPy 1.10.1 (Debian python3-scipy; scipy.ndimage), NumPy 1.24.2,
Pillow (Debian python3-pil) to read the PNGs. Run from the repository root:
    /usr/bin/python3 testdata/datasets/gen_perturb.py
Writes testdata/datasets/perturb/reference.json.

Inputs (committed as bytes, pixel = byte/255): a 28x28 crop of
datasets/photos/camera.png at rows 180.., cols 210.., and a 21x34 crop of
datasets/photos/coffee.png at rows 150.., cols 260.. (non-square, to catch
swapped axes). Outputs, float64 rounded to 1e-10:
  blur-S:     scipy.ndimage.gaussian_filter(x, S, mode='constant', cval=0, truncate=4.0)
  rot-A:      scipy.ndimage.rotate(x, A, order=1, reshape=False, mode='constant', cval=0)
  scale-S:    scipy.ndimage.affine_transform(x, diag(1/S, 1/S), offset=c - c/S, order=1,
              mode='constant', cval=0) with c = ((h-1)/2, (w-1)/2)
  shift-L-D:  scipy.ndimage.shift(x, (L*dy, L*dx), order=0, mode='constant', cval=0), D a
              compass direction (dy, dx) from DIRS below
Keys are written in the form of striate's Perturbation.String.
"""
import json, os
import numpy as np
import scipy, scipy.ndimage as nd
from PIL import Image

here = os.path.dirname(os.path.abspath(__file__))
root = os.path.dirname(os.path.dirname(here))
def crop(name, y, x, h, w):
    a = np.asarray(Image.open(os.path.join(root, "datasets", "photos", name + ".png")))
    return a[y:y + h, x:x + w]
# Shift directions as (dy, dx), y down: striate's Dir 0..7 = e ne n nw w sw s se.
DIRS = {"e": (0, 1), "ne": (-1, 1), "n": (-1, 0), "nw": (-1, -1), "w": (0, -1), "sw": (1, -1), "s": (1, 0), "se": (1, 1)}
images = {"camera28": crop("camera", 180, 210, 28, 28), "coffee21x34": crop("coffee", 150, 260, 21, 34)}
out = {"generator": "testdata/datasets/gen_perturb.py, SciPy %s, NumPy %s" % (scipy.__version__, np.__version__),
       "images": {}}
for name, u8 in images.items():
    x = u8.astype(np.float64) / 255
    h, w = x.shape
    c = np.array([(h - 1) / 2, (w - 1) / 2])
    res = {}
    for s in (0.5, 1.0, 2.5):
        res["blur-%g" % s] = nd.gaussian_filter(x, s, mode="constant", cval=0.0, truncate=4.0)
    for a in (30, -45, 90, 173):
        res["rot-%g" % a] = nd.rotate(x, a, order=1, reshape=False, mode="constant", cval=0.0)
    for s in (0.72, 1.3):  # 0.7 would put source points exactly on the edge, where SciPy decides by rounding
        res["scale-%g" % s] = nd.affine_transform(x, np.diag([1 / s, 1 / s]), offset=c - c / s, order=1, mode="constant", cval=0.0)
    for L, d in ((3, "e"), (2, "nw"), (5, "s"), (1, "ne"), (2, "sw")):
        dy, dx = DIRS[d]
        res["shift-%d-%s" % (L, d)] = nd.shift(x, (L * dy, L * dx), order=0, mode="constant", cval=0.0)
    out["images"][name] = {"h": h, "w": w, "u8": u8.ravel().tolist(),
                           "outputs": {k: np.round(v, 10).ravel().tolist() for k, v in res.items()}}
with open(os.path.join(here, "perturb", "reference.json"), "w") as f:
    json.dump(out, f)
print("ok")
