#!/usr/bin/python3
"""Reference values for striate's saliency tests (v1layer/saliency_test.go).

Run with Debian's interpreter and libraries (NOT a pyenv python):
    /usr/bin/python3 testdata/v1layer/gen_saliency.py
Versions used for the committed file: SciPy 1.10.1, NumPy 1.24.2 (Debian 12
python3-scipy, python3-numpy).

Writes saliency_scipy.json.gz:
  reduce  one pyramid step of seeded random maps: scipy.ndimage.correlate1d
          with the binomial [1 5 10 10 5 1]/32, mode 'reflect' (half-sample
          symmetric, d c b a | a b c d), origin -1 so that output 2j is
          centred between inputs 2j and 2j+1, then every second sample,
          along columns then rows.
  expand  bilinear interpolation of a seeded random coarse map to the grid d
          levels finer: scipy.ndimage.map_coordinates, order 1, mode
          'nearest', at coarse coordinates (i + 0.5)/2^d - 0.5.
  norm    the normalisation operator N() of Itti, Koch & Niebur (1998, IEEE
          PAMI 20:1254-1259) on smoothed random maps (no ties): scale to
          [0, 1]; local maxima = pixels equal to scipy.ndimage.maximum_filter
          (3x3, mode 'constant', cval -inf), at least min_peak; m_bar = mean
          of those other than the global maximum (0 if none); multiply by
          (1 - m_bar)^2.
"""
import gzip, json, os
import numpy as np
import scipy
from scipy import ndimage

HERE = os.path.dirname(os.path.abspath(__file__))
VERSIONS = {"scipy": scipy.__version__, "numpy": np.__version__}
rng = np.random.default_rng(20261203)
B = np.array([1, 5, 10, 10, 5, 1], dtype=np.float64) / 32


def r10(a):
    return [float("%.10g" % v) for v in np.asarray(a, dtype=np.float64).ravel()]


def f32(a):
    return np.asarray(a, dtype=np.float32).astype(np.float64)


reduce_cases = []
for h, w in [(16, 16), (13, 10), (7, 9), (3, 2), (1, 5)]:
    x = f32(rng.random((h, w)))
    t = ndimage.correlate1d(x, B, axis=1, mode="reflect", origin=-1)[:, ::2]
    y = ndimage.correlate1d(t, B, axis=0, mode="reflect", origin=-1)[::2, :]
    reduce_cases.append({"h": h, "w": w, "in": r10(x), "out": r10(y)})

expand_cases = []
for (sh, sw), d, (h, w) in [((4, 5), 1, (8, 10)), ((3, 2), 2, (10, 7)), ((2, 2), 3, (16, 16)), ((5, 3), 2, (20, 9))]:
    x = f32(rng.random((sh, sw)))
    yy = (np.arange(h) + 0.5) / 2 ** d - 0.5
    xx = (np.arange(w) + 0.5) / 2 ** d - 0.5
    gy, gx = np.meshgrid(yy, xx, indexing="ij")
    y = ndimage.map_coordinates(x, [gy, gx], order=1, mode="nearest")
    expand_cases.append({"sh": sh, "sw": sw, "d": d, "h": h, "w": w, "in": r10(x), "out": r10(y)})

norm_cases = []
for h, w, smooth, min_peak in [(20, 24, 1.5, 0.1), (17, 13, 1.0, 0.1), (32, 32, 2.0, 0.3), (9, 31, 1.2, 0.05)]:
    x = f32(ndimage.gaussian_filter(rng.random((h, w)), smooth, mode="reflect") ** 4)
    m = x / x.max()
    lm = (m == ndimage.maximum_filter(m, size=3, mode="constant", cval=-np.inf)) & (m >= min_peak)
    vals = np.sort(m[lm])[::-1]
    others = vals[1:]
    mbar = others.mean() if len(others) else 0.0
    y = m * (1 - mbar) ** 2
    norm_cases.append({"h": h, "w": w, "min_peak": min_peak, "peaks": int(lm.sum()), "mbar": float(mbar), "in": r10(x), "out": r10(y)})

with gzip.open(os.path.join(HERE, "saliency_scipy.json.gz"), "wt") as f:
    json.dump({"versions": VERSIONS, "reduce": reduce_cases, "expand": expand_cases, "norm": norm_cases}, f, separators=(",", ":"))
print("wrote saliency_scipy.json.gz with", VERSIONS)
