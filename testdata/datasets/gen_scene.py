#!/usr/bin/python3
"""Reference item scaling and ink boxes for striate's scene builder.

Library: scikit-image 0.19.3 (Debian python3-skimage; skimage.transform.resize),
NumPy 1.24.2, Pillow (Debian python3-pil) to read the PNG. Run from the
repository root:
    /usr/bin/python3 testdata/datasets/gen_scene.py
Writes testdata/datasets/scene/resize.json.

Input (committed as bytes, pixel = byte/255): a 28x28 crop of
datasets/photos/camera.png at rows 150.., cols 300.., with every pixel
below 150, its top two rows, bottom nine rows, left six and right two
columns set to 0, then three pixels set to the extremes 0 and 255 (one lone
bright pixel in the blank left band), so that both the edge rule and the ink
threshold matter.
Outputs, float64 rounded to 1e-10, for each side n in SIDES:
  resize-n:  skimage.transform.resize(x/255, (n, n), order=1, mode='edge',
             anti_aliasing=False, preserve_range=True)
             (pixel centres map as source = (dst + 1/2)*28/n - 1/2; edge pixels repeated)
  resize-31x22, box-31x22: the same for a 31-row, 22-column output
  box-n:     the tight half-open box [x0, y0, x1, y1) of the pixels > 0.1 of resize-n,
             computed here with NumPy
"""
import json, os
import numpy as np
import skimage
from skimage.transform import resize
from PIL import Image

SIDES = [22, 28, 31, 35, 45]
INK = 0.1

here = os.path.dirname(os.path.abspath(__file__))
root = os.path.dirname(os.path.dirname(here))
a = np.asarray(Image.open(os.path.join(root, "datasets", "photos", "camera.png")))
x = a[150:178, 300:328].astype(np.uint8).copy()
x[x < 150] = 0
x[:2, :] = 0
x[-9:, :] = 0
x[:, :6] = 0
x[:, -2:] = 0
x[5, 7] = 255
x[20, 3] = 255
x[10, 10] = 0
out = {"generator": "gen_scene.py: scikit-image %s, NumPy %s" % (skimage.__version__, np.__version__),
       "ink_level": INK, "h": 28, "w": 28, "bytes": x.flatten().tolist()}
for n in SIDES:
    r = resize(x / 255.0, (n, n), order=1, mode="edge", anti_aliasing=False, preserve_range=True)
    out["resize-%d" % n] = [round(float(v), 10) for v in r.flatten()]
    ys, xs = np.nonzero(r > INK)
    out["box-%d" % n] = [int(xs.min()), int(ys.min()), int(xs.max()) + 1, int(ys.max()) + 1]
# One non-square output, so that swapped axes show.
r = resize(x / 255.0, (31, 22), order=1, mode="edge", anti_aliasing=False, preserve_range=True)
out["resize-31x22"] = [round(float(v), 10) for v in r.flatten()]
ys, xs = np.nonzero(r > INK)
out["box-31x22"] = [int(xs.min()), int(ys.min()), int(xs.max()) + 1, int(ys.max()) + 1]
with open(os.path.join(here, "scene", "resize.json"), "w") as f:
    json.dump(out, f)
print(out["generator"])
