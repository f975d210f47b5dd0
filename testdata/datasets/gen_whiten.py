#!/usr/bin/python3
"""Reference values for striate's ZCA whitening and 1/f whitening filter.

Libraries: NumPy 1.24.2 and SciPy 1.10.1 (Debian python3-numpy, python3-scipy),
Pillow (Debian python3-pil) to read the PNG. Run from the repository root:
    /usr/bin/python3 testdata/datasets/gen_whiten.py
Writes testdata/datasets/whiten/zca.json and whiten/onef.json.

zca.json: 400 patches of 6x6 cut from datasets/photos/camera.png at positions
drawn by numpy.random.RandomState(1) (committed as bytes, so the patch set is
fixed), x = float32(byte)/float32(255), each patch's mean removed in float32
(mean taken in float64), then the ZCA matrix with eps = 1e-3:
    mu = mean over patches, C = (X-mu)^T (X-mu) / N,  C = U diag(lam) U^T
    (scipy.linalg.eigh; eigenvalues < 0 set to 0)
    W = U diag(1/sqrt(lam + eps)) U^T
onef.json: a 24x32 crop of camera.png (rows 200.., cols 180..) as float32/255,
filtered in the 2-D DFT domain by R(f) = f exp(-(f/f0)^4), f = hypot(fx, fy)
in cycles/pixel from numpy.fft.fftfreq, f0 = 0.4 (Olshausen & Field 1997).
"""
import json, os
import numpy as np
import scipy, scipy.linalg
from PIL import Image

here = os.path.dirname(os.path.abspath(__file__))
root = os.path.dirname(os.path.dirname(here))
out = os.path.join(here, "whiten")
os.makedirs(out, exist_ok=True)
img = np.asarray(Image.open(os.path.join(root, "datasets", "photos", "camera.png")))
assert img.dtype == np.uint8 and img.shape == (512, 512)

# ---- ZCA ----
S, N, EPS = 6, 400, 1e-3
rs = np.random.RandomState(1)
ys = rs.randint(0, 512 - S + 1, size=N)
xs = rs.randint(0, 512 - S + 1, size=N)
raw = np.stack([img[y:y + S, x:x + S].ravel() for y, x in zip(ys, xs)])  # N x 36 uint8
X = raw.astype(np.float32) / np.float32(255)
m = X.astype(np.float64).mean(axis=1).astype(np.float32)
X = (X - m[:, None]).astype(np.float32)
X64 = X.astype(np.float64)
mu = X64.mean(axis=0)
Xc = X64 - mu
C = Xc.T @ Xc / N
lam, U = scipy.linalg.eigh(C)
lam = np.maximum(lam, 0)
W = (U * (1 / np.sqrt(lam + EPS))) @ U.T
lam2, U2 = np.linalg.eigh(C)
W2 = (U2 * (1 / np.sqrt(np.maximum(lam2, 0) + EPS))) @ U2.T
assert np.abs(W - W2).max() < 1e-9 * np.abs(W).max(), "numpy and scipy disagree"
with open(os.path.join(out, "zca.json"), "w") as f:
    json.dump({"generator": "testdata/datasets/gen_whiten.py, NumPy %s, SciPy %s" % (np.__version__, scipy.__version__),
               "size": S, "eps": EPS, "patches_u8": raw.ravel().tolist(),
               "mean": mu.tolist(), "eigenvalues": lam.tolist(), "W": W.ravel().tolist()}, f)

# ---- 1/f whitening filter ----
H, Wd, F0 = 24, 32, 0.4
crop = img[200:200 + H, 180:180 + Wd].astype(np.float32) / np.float32(255)
fy = np.fft.fftfreq(H)[:, None]
fx = np.fft.fftfreq(Wd)[None, :]
f = np.hypot(fx, fy)
R = f * np.exp(-(f / F0) ** 4)
res = np.real(np.fft.ifft2(np.fft.fft2(crop.astype(np.float64)) * R))
with open(os.path.join(out, "onef.json"), "w") as f_:
    json.dump({"generator": "testdata/datasets/gen_whiten.py, NumPy %s" % np.__version__,
               "h": H, "w": Wd, "f0": F0, "y0": 200, "x0": 180, "output": res.ravel().tolist()}, f_)
print("ok", W.shape, lam[:3], lam[-3:])
