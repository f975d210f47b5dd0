#!/usr/bin/python3
"""Reference centres of mass for pipeline's input centring, computed with
scipy.ndimage.center_of_mass (Debian python3-scipy 1.10.1; numpy 1.24).

Run:  /usr/bin/python3 testdata/pipeline/gen_center.py
Writes testdata/pipeline/center.json: for each image (h, w, row-major pixels in
[0,1], float32-exact) scipy's (row, col) centre of mass and the integer shift
round((h-1)/2 - row), round((w-1)/2 - col) (numpy's round half to even; the
images are chosen so that no value is a tie).
"""
import json, os
import numpy as np
import scipy
from scipy import ndimage

rng = np.random.default_rng(5)
cases = []
for h, w in [(28, 28), (28, 28), (20, 31), (9, 12)]:
    img = np.zeros((h, w), np.float32)
    y0, x0 = rng.integers(1, h - 6), rng.integers(1, w - 6)
    img[y0:y0 + 5, x0:x0 + 4] = rng.random((5, 4)).astype(np.float32)
    img += (rng.random((h, w)) < 0.05).astype(np.float32) * np.float32(0.5)
    cy, cx = ndimage.center_of_mass(img.astype(np.float64))
    dy, dx = (h - 1) / 2 - cy, (w - 1) / 2 - cx
    assert abs(abs(dy) % 1 - 0.5) > 1e-3 and abs(abs(dx) % 1 - 0.5) > 1e-3
    cases.append({"h": h, "w": w, "pix": [float(v) for v in img.ravel()],
                  "cy": cy, "cx": cx, "dy": int(np.round(dy)), "dx": int(np.round(dx))})
out = {"source": "scipy.ndimage.center_of_mass, scipy %s, numpy %s" % (scipy.__version__, np.__version__),
       "cases": cases}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "center.json"), "w") as f:
    json.dump(out, f)

# 3×3 median filter reference (scipy.ndimage.median_filter, size 3, mode
# "nearest" = border pixels replicated) on a 13×17 random image.
img = rng.random((13, 17)).astype(np.float32)
med = ndimage.median_filter(img, size=3, mode="nearest")
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "median.json"), "w") as f:
    json.dump({"source": "scipy.ndimage.median_filter(size=3, mode='nearest'), scipy %s" % scipy.__version__,
               "h": 13, "w": 17, "in": [float(v) for v in img.ravel()], "want": [float(v) for v in med.ravel()]}, f)
