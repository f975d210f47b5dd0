#!/usr/bin/python3
"""Reference values for pipeline's input.center "attend": Otsu's threshold
(skimage.filters.threshold_otsu, nbins 256; Debian python3-skimage 0.19.3)
and the 8-connected components of the ink above it (scipy.ndimage.label
with a 3×3 structure of ones; Debian python3-scipy 1.10.1; numpy 1.24.2).

Run:  /usr/bin/python3 testdata/pipeline/gen_attend.py
Writes testdata/pipeline/attend.json. Images: random grey levels k/255
spanning 0…1 (no value falls on a histogram bin edge but the ends), a
stroke with specks in eighths (values on the edges, exactly), a low-contrast
copy of it, and the first eight digits of digits32.u8 (MNIST test digits)
with two 8×8 fragments of other digits pasted in with max.
"""
import json, os
import numpy as np
import scipy, skimage
from scipy import ndimage
from skimage import filters

here = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(11)
images = []
g = rng.integers(0, 256, (24, 20))
g[0, 0], g[0, 1] = 0, 255
images.append((g / 255).astype(np.float32))
s = np.zeros((18, 16), np.float32)
s[2:15, 7:10] = 1.0
s[8, 3:13] = np.float32(0.625)
s[rng.random(s.shape) < 0.06] = np.float32(0.875)
s[1, 1], s[16, 14] = np.float32(0.375), np.float32(0.5)
images.append(s)
images.append((np.float32(0.25) + np.float32(0.125) * s).astype(np.float32))
d = np.fromfile(os.path.join(here, "digits32.u8"), np.uint8).reshape(32, 28, 28)
for k in range(8):
    img = d[k].astype(np.float32) / np.float32(255)
    for f in range(2):
        src = d[8 + 2 * k + f].astype(np.float32) / np.float32(255)
        fy, fx = rng.integers(0, 21, 2)
        oy, ox = rng.integers(0, 21, 2)
        img[oy:oy + 8, ox:ox + 8] = np.maximum(img[oy:oy + 8, ox:ox + 8], src[fy:fy + 8, fx:fx + 8])
    images.append(img)
cases = []
for img in images:
    t = filters.threshold_otsu(img, nbins=256)
    lab, n = ndimage.label(img > t, structure=np.ones((3, 3), int))
    cases.append({"h": img.shape[0], "w": img.shape[1], "in": [float(v) for v in img.ravel()],
                  "otsu": float(t), "n": int(n), "labels": [int(v) for v in lab.ravel()]})
out = {"source": "skimage.filters.threshold_otsu(nbins=256) (scikit-image %s); "
                 "scipy.ndimage.label(structure=ones((3,3))) (scipy %s); numpy %s"
                 % (skimage.__version__, scipy.__version__, np.__version__),
       "cases": cases}
with open(os.path.join(here, "attend.json"), "w") as f:
    json.dump(out, f)
