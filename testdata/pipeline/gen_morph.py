#!/usr/bin/python3
"""Reference outputs for pipeline's morphological input filters: grey-level
area opening and closing (skimage.morphology.area_opening / area_closing,
Debian python3-skimage 0.19.3) and the 3×3 grey opening and closing
(scipy.ndimage.grey_opening / grey_closing, size 3, mode "nearest"; Debian python3-scipy
1.10.1; numpy 1.24.2).

Run:  /usr/bin/python3 testdata/pipeline/gen_morph.py
Writes testdata/pipeline/morph.json. The images hold few distinct grey
levels (eighths), so ties between pixels of one level are exercised, and a
digit-like stroke with specks, so small and large components meet.
"""
import json, os
import numpy as np
import scipy, skimage
from scipy import ndimage
from skimage import morphology

rng = np.random.default_rng(12)
cases = []
def stroke_image(h, w):
    img = np.zeros((h, w), np.float32)
    img[3:h - 3, w // 2 - 1:w // 2 + 2] = 1.0           # a vertical bar 3 px wide
    img[h // 2, 2:w - 2] = np.float32(0.625)            # a 1-px line across
    specks = rng.random((h, w)) < 0.08
    img[specks] = np.float32(0.875)
    holes = rng.random((h, w)) < 0.05
    img[holes] = 0
    return img
images = [
    (rng.integers(0, 9, (11, 13)) / 8).astype(np.float32),
    stroke_image(16, 14),
    (rng.integers(0, 3, (9, 10)) / 2).astype(np.float32),
]
for img in images:
    h, w = img.shape
    for lam in (2, 4, 9):
        for conn in (1, 2):
            op = morphology.area_opening(img, area_threshold=lam, connectivity=conn)
            cl = morphology.area_closing(img, area_threshold=lam, connectivity=conn)
            cases.append({"h": h, "w": w, "lambda": lam, "conn8": conn == 2,
                          "in": [float(v) for v in img.ravel()],
                          "open": [float(v) for v in op.ravel()],
                          "close": [float(v) for v in cl.ravel()]})
grey = [{"h": img.shape[0], "w": img.shape[1], "in": [float(v) for v in img.ravel()],
         "open3": [float(v) for v in ndimage.grey_opening(img, size=3, mode="nearest").ravel()],
         "close3": [float(v) for v in ndimage.grey_closing(img, size=3, mode="nearest").ravel()]}
        for img in images]
out = {"source": "skimage.morphology.area_opening/area_closing (scikit-image %s); "
                 "scipy.ndimage.grey_opening/grey_closing(size=3, mode='nearest') (scipy %s); numpy %s"
                 % (skimage.__version__, scipy.__version__, np.__version__),
       "area": cases, "grey": grey}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "morph.json"), "w") as f:
    json.dump(out, f)
