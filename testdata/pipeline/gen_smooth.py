#!/usr/bin/python3
"""Reference outputs for pipeline's input.denoise "smooth", computed
independently with NumPy and scipy.ndimage.median_filter (size 3, mode
"nearest" = border pixels replicated; Debian python3-scipy 1.10.1, numpy
1.24.2).

Run:  /usr/bin/python3 testdata/pipeline/gen_smooth.py
Writes testdata/pipeline/smooth.json. For each image (h, w, row-major float32
pixels in [0,1]): the noise estimate sigma = median|d|/0.6745 over the
diagonal Haar coefficients d = (a - b - c + e)/2 of the non-overlapping 2x2
blocks [a b; c e] (Donoho & Johnstone 1994), the strength
s = clip((sigma - lo)/step, 0, 2) with step = 0.185 - 0.13 and
lo = 0.13 - step/2, the blend m_j + (s - j)(m_{j+1} - m_j), j = floor(s)
(m_0 the image, m_{k+1} the 3x3 median of m_k), and the coring
clip((v - a)/(1 - 2a), 0, 1) with a = min(k(s)*sigma, 0.25),
k(s) = s for s <= 1 and 1 - 0.25(s - 1) above.
The images are a bright stroke on a dark ground with clipped Gaussian noise
of several levels, so that s = 0, 0 < s < 1, 1 < s < 2 and s = 2 all occur.
"""
import json, os
import numpy as np
import scipy
from scipy import ndimage

STEP = 0.185 - 0.13
LO = 0.13 - STEP / 2

def sigma_hat(img):
    h, w = img.shape
    b = img[: h // 2 * 2, : w // 2 * 2].astype(np.float64)
    d = (b[0::2, 0::2] - b[0::2, 1::2] - b[1::2, 0::2] + b[1::2, 1::2]) / 2
    return float(np.median(np.abs(d)) / 0.6745)

def smooth(img):
    sd = sigma_hat(img)
    s = min(2.0, max(0.0, (sd - LO) / STEP))
    if s == 0:
        return sd, s, img.astype(np.float64)
    m = [img.astype(np.float64)]
    m.append(ndimage.median_filter(img, size=3, mode="nearest").astype(np.float64))
    m.append(ndimage.median_filter(m[1].astype(np.float32), size=3, mode="nearest").astype(np.float64))
    j = min(int(np.floor(s)), 1)
    out = m[j] + (s - j) * (m[j + 1] - m[j])
    k = s if s <= 1 else 1 - 0.25 * (s - 1)
    a = min(k * sd, 0.25)
    if a > 0:
        out = np.clip((out - a) / (1 - 2 * a), 0, 1)
    return sd, s, out

rng = np.random.default_rng(21)
cases = []
for (h, w), noise in [((28, 28), 0.0), ((28, 28), 0.19), ((28, 28), 0.26), ((28, 28), 0.34), ((28, 28), 0.4),
                      ((28, 28), 0.5), ((20, 31), 0.24), ((17, 13), 0.45)]:
    img = np.zeros((h, w), np.float64)
    img[3:h - 3, w // 2 - 2:w // 2 + 2] = 1.0
    img[h // 2 - 1:h // 2 + 1, 3:w - 3] = 0.8
    img = np.clip(img + noise * rng.standard_normal((h, w)), 0, 1).astype(np.float32)
    sd, s, out = smooth(img)
    cases.append({"h": h, "w": w, "noise": noise, "in": [float(v) for v in img.ravel()],
                  "sigma": sd, "strength": s, "want": [float(v) for v in out.ravel()]})
ss = [c["strength"] for c in cases]
assert 0 in ss and 2 in ss and any(0 < v < 1 for v in ss) and any(1 < v < 2 for v in ss), ss
out = {"source": "scipy.ndimage.median_filter(size=3, mode='nearest') (scipy %s), numpy %s"
                 % (scipy.__version__, np.__version__), "cases": cases}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "smooth.json"), "w") as f:
    json.dump(out, f)
print([(c["noise"], round(c["sigma"], 4), round(c["strength"], 3)) for c in cases])
