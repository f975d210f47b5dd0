#!/usr/bin/python3
"""Reference values for striate's v1layer tests.

Run with Debian's interpreter and libraries (NOT a pyenv python):
    /usr/bin/python3 testdata/v1layer/gen_reference.py
Versions used for the committed files: scikit-image 0.19.3, SciPy 1.10.1,
NumPy 1.24.2 (Debian 12 python3-skimage, python3-scipy, python3-numpy).

Writes (gzip JSON):
  gabor_skimage.json.gz   skimage.filters.gabor_kernel for a grid of
                          theta, lambda, sigma, gamma, psi, then the zero-mean
                          unit-L2 normalisation striate uses (k = env*(cos - c),
                          c = sum(env cos)/sum(env), k /= ||k||; odd phases too).
  gauss_scipy.json.gz     scipy.ndimage.gaussian_filter responses (and DoG and
                          local-contrast-normalised DoG built from them) on two
                          committed images, modes 'constant' and 'reflect'.

Conventions: striate's theta is counter-clockwise with the image y axis up,
skimage's rotx = x cos(t) + y sin(t) has y = row index (down), so skimage's
theta = -theta. skimage's carrier is exp(i(2 pi f rotx + offset)), striate's
cos(2 pi x'/lambda - psi): offset = -psi. skimage sigma_x is striate's sigma,
sigma_y = sigma/gamma.
"""
import gzip, json, math, os
import numpy as np
import scipy, skimage
from scipy import ndimage
from skimage.filters import gabor_kernel
from skimage import io

HERE = os.path.dirname(os.path.abspath(__file__))
VERSIONS = {"scikit-image": skimage.__version__, "scipy": scipy.__version__, "numpy": np.__version__}


def dump(name, obj):
    with gzip.open(os.path.join(HERE, name), "wt") as f:
        json.dump(obj, f, separators=(",", ":"))


def r9(a):
    return [float("%.10g" % v) for v in np.asarray(a, dtype=np.float64).ravel()]


# --- Gabor grid -------------------------------------------------------------
cases = []
thetas = [0.0, math.pi / 6, math.pi / 4, math.pi / 2, 2 * math.pi / 3, 3 * math.pi / 4]
lambdas = [4.0, 6.5, 10.0]
sigmas = [1.5, 2.5]
gammas = [1.0, 0.6]
psis = [0.0, math.pi / 2, math.pi / 4, math.pi]
i = 0
for th in thetas:
    for lam in lambdas:
        # a fixed, covering walk through the other parameters
        sg = sigmas[i % 2]
        ga = gammas[(i // 2) % 2]
        ps = psis[i % 4]
        i += 1
        g = gabor_kernel(1.0 / lam, theta=-th, sigma_x=sg, sigma_y=sg / ga, n_stds=3, offset=-ps)
        env = np.abs(g)
        car = np.real(g) / env
        c = (env * car).sum() / env.sum()
        k = env * (car - c)
        k /= np.sqrt((k * k).sum())
        ry, rx = (k.shape[0] - 1) // 2, (k.shape[1] - 1) // 2
        cases.append({"theta": th, "lambda": lam, "sigma": sg, "gamma": ga, "psi": ps,
                      "rx": rx, "ry": ry, "values": r9(k)})
dump("gabor_skimage.json.gz", {"source": "skimage.filters.gabor_kernel + zero-mean/unit-L2 as in striate",
                               "versions": VERSIONS, "cases": cases})

# --- Gaussian / DoG / LCN on committed images ---------------------------------
# image A: 30x32 crop of skimage's camera.png (data.camera(), public domain),
# taken from ../shared/bench/data/gray/camera.png rows 200..229, cols 230..261.
cam = io.imread("/work/shared/bench/data/gray/camera.png")
imgA = cam[200:230, 230:262].astype(np.float64) / 255.0
rng = np.random.default_rng(7)
imgB = rng.integers(0, 256, size=(20, 24)).astype(np.float64) / 255.0

out = {"source": "scipy.ndimage.gaussian_filter(img, sigma, mode=mode, radius=r)", "versions": VERSIONS, "images": []}
for name, img in (("camera_crop", imgA), ("random", imgB)):
    rec = {"name": name, "h": img.shape[0], "w": img.shape[1], "pix_u8": [int(round(v * 255)) for v in img.ravel()],
           "gauss": [], "dog": [], "lcn": []}
    for mode in ("constant", "reflect"):
        for s in (1.0, 2.5):
            r = int(math.ceil(3 * s))
            rec["gauss"].append({"mode": mode, "sigma": s, "radius": r,
                                 "out": r9(ndimage.gaussian_filter(img, s, mode=mode, radius=r))})
        for sc in (1.0, 2.0):
            ss = 1.6 * sc
            r = int(math.ceil(3 * ss - 1e-9))
            delta = np.zeros((2 * r + 1, 2 * r + 1)); delta[r, r] = 1
            kern = ndimage.gaussian_filter(delta, sc, mode="constant", radius=r) - \
                ndimage.gaussian_filter(delta, ss, mode="constant", radius=r)
            norm = np.sqrt((kern * kern).sum())
            d = (ndimage.gaussian_filter(img, sc, mode=mode, radius=r) -
                 ndimage.gaussian_filter(img, ss, mode=mode, radius=r)) / norm
            rec["dog"].append({"mode": mode, "sigma_c": sc, "ratio": 1.6, "radius": r, "out": r9(d)})
            if sc == 1.0:
                ls, eps = 3.0, 0.01
                lr = int(math.ceil(3 * ls))
                local = ndimage.gaussian_filter(d * d, ls, mode=mode, radius=lr)
                rec["lcn"].append({"mode": mode, "sigma_c": sc, "lcn_sigma": ls, "epsilon": eps,
                                   "out": r9(d / (eps + np.sqrt(local)))})
    out["images"].append(rec)
dump("gauss_scipy.json.gz", out)
print("wrote", len(cases), "Gabor cases and", len(out["images"]), "images;", VERSIONS)
