#!/usr/bin/python3
"""Reference values for internal/raster (run from the repository root):

    /usr/bin/python3 testdata/raster/make_raster_ref.py > testdata/raster/raster_ref.json

SciPy (Debian python3-scipy) and NumPy: scipy.ndimage.map_coordinates with
order=1 in modes "grid-constant" (Bilinear), "nearest" (BilinearEdge) and "constant" (BilinearInside, whose
rounding slack of 1e-9 px is applied by clipping such points first),
scipy.ndimage's 1-D Gaussian weights (_gaussian_kernel1d, order 0), and
numpy.pad mode "symmetric" (Reflect).
"""
import json
import numpy as np
import scipy
import scipy.ndimage as ndi

rng = np.random.default_rng(7)
h, w = 5, 7
img = rng.random((h, w)).astype(np.float32)
pts = np.concatenate([
    rng.uniform(-1.5, [h + 0.5, w + 0.5], size=(40, 2)),
    np.array([[0, 0], [h - 1, w - 1], [-0.5, 3], [2, -0.25], [h - 0.5, 2.5], [1.5, w - 1 + 1e-12]]),
])
img64 = img.astype(np.float64)
grid = ndi.map_coordinates(img64, pts.T, order=1, mode="grid-constant", cval=0.0, prefilter=False)
# BilinearInside counts a point at most 1e-9 px outside the grid (rounding) as on
# its edge: such points are clipped onto the grid before SciPy samples them.
hi = np.array([h - 1, w - 1], dtype=np.float64)
slack = ((pts < 0) & (pts >= -1e-9)) | ((pts > hi) & (pts <= hi + 1e-9))
inside = ndi.map_coordinates(img64, np.where(slack, np.clip(pts, 0, hi), pts).T, order=1, mode="constant",
                             cval=0.0, prefilter=False)
nearest = ndi.map_coordinates(img64, pts.T, order=1, mode="nearest", prefilter=False)
n = 5
idx = np.arange(-23, 24)
padded = np.pad(np.arange(n), 30, mode="symmetric")
reflect = [int(padded[i + 30]) for i in idx]
gauss = {}
for sigma, r in [(0.7, 3), (1.0, 4), (2.5, 10)]:
    gauss["%g/%d" % (sigma, r)] = list(ndi._filters._gaussian_kernel1d(sigma, 0, r)[::-1])
print(json.dumps({
    "source": "scipy %s, numpy %s" % (scipy.__version__, np.__version__),
    "h": h, "w": w, "image": img.ravel().tolist(), "points": pts.tolist(),
    "grid_constant": grid.tolist(), "constant": inside.tolist(), "nearest": nearest.tolist(),
    "reflect_n": n, "reflect_idx": idx.tolist(), "reflect": reflect,
    "gaussian": gauss,
}, indent=1))
