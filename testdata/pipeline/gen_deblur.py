#!/usr/bin/python3
"""Reference outputs for pipeline's input.deblur "auto" steps, computed
independently with NumPy 1.24.2 and SciPy 1.10.1 (Debian python3-numpy,
python3-scipy).

Run:  /usr/bin/python3 testdata/pipeline/gen_deblur.py
Writes testdata/pipeline/deblur.json. For each image (h, w, row-major
float32 pixels in [0,1]; strokes on a dark ground, blurred by
scipy.ndimage.gaussian_filter):
  "blur":  scipy.ndimage.gaussian_filter(img, sigma, mode="nearest",
           truncate=3.0), the separable Gaussian with border pixels
           replicated and radius int(3*sigma + 0.5);
  "rl":    12 Richardson-Lucy iterations (Richardson 1972, Lucy 1974)
           u <- u * G(d / max(G(u), eps)), started from u = d + eps with
           d = max(img, 0) + eps, eps = 1e-4, G the Gaussian above.
"""
import json, os
import numpy as np
from scipy import ndimage

EPS = 1e-4

def g(x, s):
    return ndimage.gaussian_filter(x, s, mode="nearest", truncate=3.0)

def rl(img, s, iters=12):
    d = np.maximum(img.astype(np.float64), 0) + EPS
    u = d.copy()
    for _ in range(iters):
        u = u * g(d / np.maximum(g(u, s), EPS), s)
    return u

def strokes(h, w):
    img = np.zeros((h, w), np.float64)
    img[4:h - 4, w // 2 - 1:w // 2 + 2] = 1.0
    img[h // 2 - 1:h // 2 + 1, 3:w - 5] = 0.85
    for t in range(min(h, w) - 8):
        img[4 + t, 4 + t // 2] = 0.9
    return img

cases = []
for (h, w), pre, sigma in [((28, 28), 0.0, 0.8), ((28, 28), 1.5, 1.7), ((28, 28), 2.0, 2.4), ((20, 31), 1.0, 1.2)]:
    img = strokes(h, w)
    if pre > 0:
        img = g(img, pre)
    img = img.astype(np.float32)
    cases.append({"h": h, "w": w, "sigma": sigma, "in": [float(v) for v in img.ravel()],
                  "blur": [float(v) for v in g(img.astype(np.float64), sigma).ravel()],
                  "rl": [float(v) for v in rl(img, sigma).ravel()]})
out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "deblur.json")
with open(out, "w") as f:
    json.dump({"source": "NumPy 1.24.2, SciPy 1.10.1 (scipy.ndimage.gaussian_filter, mode nearest, truncate 3)", "cases": cases}, f)
print("wrote", out)
